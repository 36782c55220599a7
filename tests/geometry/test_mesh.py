"""Mesh intake: formats, cleaning counts, refusals, units, closed solids."""

from __future__ import annotations

import dataclasses
import os

import numpy as np
import pytest
import trimesh
from shapes import icosphere, saddle

from wirecut.config import MoldSide, Units, default_job
from wirecut.errors import MeshError
from wirecut.findings import Severity
from wirecut.geometry.mesh import (
    CLOSED_FACING_THRESHOLD,
    edge_table,
    edge_use,
    load_target,
    target_from_arrays,
)

JOB = default_job()


def _saddle_mesh() -> trimesh.Trimesh:
    v, f = saddle(c=2000.0, half=500.0, n=21)
    return trimesh.Trimesh(v, f, process=False)


@pytest.mark.parametrize("suffix", [".stl", ".obj", ".ply", ".off", ".glb"])
def test_round_trip_each_format(tmp_path, suffix):
    mesh = _saddle_mesh()
    path = tmp_path / f"part{suffix}"
    mesh.export(path)
    target, _ = load_target(path, JOB)
    # the file holds the same 21 x 21 grid: 441 vertices, 800 triangles (by construction)
    assert len(target.vertices) == 441
    assert len(target.faces) == 800
    assert target.area_mm2 == pytest.approx(mesh.area, rel=1e-6)
    assert not target.was_closed


def test_ascii_stl_round_trip(tmp_path):
    path = tmp_path / "ascii.stl"
    path.write_text(trimesh.exchange.stl.export_stl_ascii(_saddle_mesh()))
    target, findings = load_target(path, JOB)
    # an STL stores 3 corners per facet: 2400 corners merge into the 441 grid vertices
    assert target.merged_vertices == 2400 - 441
    assert len(target.faces) == 800
    assert any(f.code == "mesh-cleaned" and f.severity is Severity.INFO for f in findings)


def test_duplicates_merged_and_degenerate_faces_dropped():
    v = np.array([[0, 0, 0], [100, 0, 0], [100, 100, 0], [0, 100, 0]], float)
    faces = [[0, 1, 2], [0, 2, 3]]
    # a copy of vertex 2, a face with a repeated index, a collinear face, a duplicate face
    v = np.vstack([v, [[100, 100, 0], [50, 0, 0]]])
    faces += [[0, 4, 3], [0, 0, 1], [0, 5, 1], [2, 0, 1]]
    target, findings = target_from_arrays(v, np.array(faces), JOB)
    assert target.merged_vertices == 1  # vertex 4 equals vertex 2
    # [0,4,3] becomes [0,2,3] (duplicate), [0,0,1] repeats, [0,5,1] collinear, [2,0,1] duplicate
    assert target.dropped_faces == 4
    assert len(target.faces) == 2
    # unit square: area 100 x 100 mm^2 (by construction)
    assert target.area_mm2 == pytest.approx(1e4)
    assert "merged 1" in findings[0].message and "dropped 4" in findings[0].message


@pytest.mark.parametrize(
    "name, content, problem",
    [
        ("empty.stl", b"", "empty"),
        ("text.stl", b"hello world, this is not a mesh\n" * 4, "mesh"),
        ("garbage.stl", None, "unreadable"),
        ("note.obj", b"just a note\n", "mesh"),
        ("cut.stl", b"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0 0\n", "mesh"),
        ("lines.obj", b"v 0 0 0\nv 1 0 0\nv 1 1 0\nl 1 2 3\n", "point cloud"),
        ("nan.obj", b"v 0 0 0\nv nan 0 0\nv 1 1 0\nf 1 2 3\n", "NaN"),
        ("inf.obj", b"v 0 0 0\nv inf 0 0\nv 1 1 0\nf 1 2 3\n", "NaN or infinite"),
        ("flat.obj", b"v 0 0 0\nv 1 0 0\nv 2 0 0\nf 1 2 3\n", "zero total area"),
        ("shape.step", b"ISO-10303-21;", "suffix"),
    ],
)
def test_refusals_name_the_file(tmp_path, name, content, problem):
    path = tmp_path / name
    path.write_bytes(os.urandom(600) if content is None else content)
    with pytest.raises(MeshError) as err:
        load_target(path, JOB)
    msg = str(err.value)
    assert name in msg and problem in msg and "\n" not in msg


def test_truncated_binary_stl(tmp_path):
    path = tmp_path / "half.stl"
    _saddle_mesh().export(path)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(MeshError, match="half.stl"):
        load_target(path, JOB)


def test_point_cloud_ply(tmp_path):
    path = tmp_path / "cloud.ply"
    trimesh.PointCloud(np.random.default_rng(1).random((20, 3)) * 500).export(path)
    with pytest.raises(MeshError, match="cloud.ply.*point cloud"):
        load_target(path, JOB)


def test_missing_and_folder(tmp_path):
    with pytest.raises(MeshError, match="nothere.stl does not exist"):
        load_target(tmp_path / "nothere.stl", JOB)
    (tmp_path / "dir.stl").mkdir()
    with pytest.raises(MeshError, match="dir.stl is a folder"):
        load_target(tmp_path / "dir.stl", JOB)


def test_no_faces_arrays():
    with pytest.raises(MeshError, match="no faces"):
        target_from_arrays(np.zeros((3, 3)), np.zeros((0, 3), int), JOB)


def test_units_convert_and_warn(tmp_path):
    v, f = saddle(c=2.0, half=0.5, n=11)  # the saddle written in metres: 1 m x 1 m
    path = tmp_path / "metres.obj"
    trimesh.Trimesh(v, f, process=False).export(path)
    target, findings = load_target(path, JOB)
    # 1 m written as 1 with no unit: the diagonal (~1.5 mm) is below 50 mm
    warn = [f for f in findings if f.code == "suspicious-units"]
    assert warn and warn[0].severity is Severity.ATTENTION and "--units m" in warn[0].message
    target_m, findings_m = load_target(path, JOB, units=Units.M)
    # 1 m = 1000 mm (SI definition)
    assert np.allclose(target_m.vertices, target.vertices * 1000.0)
    assert target_m.area_mm2 == pytest.approx(target.area_mm2 * 1e6, rel=1e-9)
    assert not [f for f in findings_m if f.code == "suspicious-units"]
    # 1 in = 25.4 mm (international inch, 1959)
    target_in, _ = load_target(path, JOB, units=Units.IN)
    assert np.ptp(target_in.vertices[:, 0]) == pytest.approx(25.4)


def test_closed_solid_keeps_waste_facing_faces():
    v, f = icosphere(500.0, 3)
    target, _ = target_from_arrays(v, f, JOB)
    assert target.was_closed
    up = np.array([0.0, 0.0, 1.0])
    assert (target.face_normals @ up > CLOSED_FACING_THRESHOLD).all()
    # faces kept: those whose outward normal n has n_z > 0.1 (sphere: normal = position / R)
    tri = v[f]
    n = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    n /= np.linalg.norm(n, axis=1, keepdims=True)
    assert len(target.faces) == int((n @ up > CLOSED_FACING_THRESHOLD).sum())
    # counter-mold: the waste lies below, so the lower faces are kept
    above = dataclasses.replace(JOB, mold=dataclasses.replace(JOB.mold, side=MoldSide.ABOVE))
    lower, _ = target_from_arrays(v, f, above)
    assert (lower.face_normals @ up < -CLOSED_FACING_THRESHOLD).all()


def test_closed_solid_inside_out_is_turned_outward():
    v, f = icosphere(500.0, 2)
    target, _ = target_from_arrays(v, f[:, ::-1], JOB)
    # only the upper half remains (equator vertices at z = 0 belong to upward faces)
    assert target.vertices[:, 2].min() > -1e-9
    assert (target.face_normals[:, 2] > CLOSED_FACING_THRESHOLD).all()


def test_open_surface_flipped_toward_waste_and_made_consistent():
    v, f = saddle(n=21)
    rng = np.random.default_rng(7)
    f = f.copy()
    flip = rng.random(len(f)) < 0.5
    f[flip] = f[flip][:, ::-1]  # a soup of randomly wound faces
    target, _ = target_from_arrays(v, f, JOB)
    # z = x y / c is a graph over the plan: every normal has n_z > 0 once oriented (by construction)
    assert (target.face_normals[:, 2] > 0).all()
    below = dataclasses.replace(JOB, mold=dataclasses.replace(JOB.mold, up=(0.0, 0.0, -1.0)))
    down, _ = target_from_arrays(v, f, below)
    assert (down.face_normals[:, 2] < 0).all()


def test_glb_scene_is_concatenated(tmp_path):
    a = _saddle_mesh()
    b = _saddle_mesh()
    b.apply_translation([1500.0, 0.0, 0.0])
    scene = trimesh.Scene([a, b])
    path = tmp_path / "two.glb"
    scene.export(path)
    target, _ = load_target(path, JOB)
    # two 21 x 21 grids side by side (by construction)
    assert len(target.faces) == 1600
    assert target.area_mm2 == pytest.approx(2 * a.area, rel=1e-6)
    assert np.ptp(target.vertices[:, 0]) == pytest.approx(2500.0)


def test_units_hint_for_a_large_mesh(tmp_path):
    v, f = saddle(c=2000.0, half=500.0, n=11)
    path = tmp_path / "big.obj"
    trimesh.Trimesh(v, f, process=False).export(path)
    # a 1 m part read as if in metres is 1 km across: the hint is to read it in mm
    _, findings = load_target(path, JOB, units=Units.M)
    warn = [f for f in findings if f.code == "suspicious-units"]
    assert warn and "--units mm" in warn[0].message and "large" in warn[0].message


def test_target_records_intake():
    v, f = saddle(n=11)
    target, findings = target_from_arrays(v, f, JOB, units=Units.CM)
    assert target.source_units is Units.CM and target.source == "arrays"
    # 1 cm = 10 mm (SI definition)
    assert np.ptp(target.vertices[:, 0]) == pytest.approx(10000.0)
    assert findings == []  # a 10 m x 10 m grid, nothing merged or dropped
    assert target.vertex_normals.shape == (121, 3)
    assert np.allclose(np.linalg.norm(target.vertex_normals, axis=1), 1.0)


@pytest.mark.parametrize("suffix", [".stl", ".obj", ".ply", ".off", ".glb"])
@pytest.mark.parametrize("kind", ["random", "text", "header-only"])
def test_every_format_refuses_garbage(tmp_path, suffix, kind):
    headers = {
        ".stl": b"solid a\n",
        ".obj": b"# only a comment\n",
        ".ply": b"ply\nformat ascii 1.0\nelement vertex 3\n",
        ".off": b"OFF\n3 1 0\n0 0 0\n",
        ".glb": b"glTF\x02\x00\x00\x00",
    }
    data = {
        "random": np.random.default_rng(5).bytes(2000),
        "text": b"hello world\n" * 10,
        "header-only": headers[suffix],
    }[kind]
    path = tmp_path / f"{kind}{suffix}"
    path.write_bytes(data)
    with pytest.raises(MeshError, match=path.name):
        load_target(path, JOB)


@pytest.mark.parametrize(
    "spans",
    [
        (4, 4, 4),
        (2**30, 2**30, 2**30),
        (2**40, 3, 2**20),
        (2**10, 2**60, 3),
        (2**61, 2**61, 5),
        (1, 1, 1),
    ],
)
def test_unique_rows_is_numpys_unique(spans) -> None:
    # the vertex merge's own row dedup gives exactly np.unique(axis=0)'s first indices and
    # inverse (numpy is the reference), whether its columns pack into one sort key, two or
    # none
    from wirecut.geometry.mesh import unique_rows

    rng = np.random.default_rng(7)
    q = np.column_stack([rng.integers(-s, s, 5000) for s in spans]).astype(np.int64)
    q = np.vstack([q, q[::3]])  # repeated rows
    _, first, inverse = np.unique(q, axis=0, return_index=True, return_inverse=True)
    f, inv = unique_rows(q)
    assert np.array_equal(f, first)
    assert np.array_equal(inv, inverse.ravel())
    f2, inv2 = unique_rows(q, (q.min(axis=0), q.max(axis=0)))  # bounds handed over
    assert np.array_equal(f2, first) and np.array_equal(inv2, inverse.ravel())


def test_intake_merge_bounds_are_the_rounded_columns_extremes() -> None:
    # the merge takes its key ranges from the rounded extremes instead of scanning the rounded
    # coordinates: rounding a product is monotone, so they must be the same integers
    rng = np.random.default_rng(9)
    for scale in (1.0, 25.4, 1000.0):
        v = rng.normal(0.0, 300.0, (4000, 3))
        grid = 1.0 / (float(np.linalg.norm(np.ptp(v * scale, axis=0))) * 1e-9)
        q = np.rint(v * scale * grid).astype(np.int64)
        lo = np.array([v[:, j].min() for j in range(3)]) * scale
        assert np.array_equal(np.rint(lo * grid).astype(np.int64), q.min(axis=0))


@pytest.mark.parametrize("up", [(0.0, 0.0, 1.0), (0.0, 0.0, -1.0)])
def test_the_edge_table_handed_over_at_intake_is_the_faces_own(up) -> None:
    # intake passes on the edge table of its orientation step (re-wound faces' edges
    # permuted) instead of sorting again: it must equal edge_table of the final faces

    v, f = saddle(n=21)
    rng = np.random.default_rng(3)
    f = f.copy()
    flip = rng.random(len(f)) < 0.5
    f[flip] = f[flip][:, ::-1]
    job = dataclasses.replace(JOB, mold=dataclasses.replace(JOB.mold, up=up))
    target, _ = target_from_arrays(v, f, job)
    assert "edge_table" in target.__dict__
    _assert_same_table(target.edge_table, edge_table(target.faces, len(target.vertices)))


def _assert_same_table(got, want) -> None:
    for name in ("edges", "counts", "order", "first", "inverse"):
        assert np.array_equal(getattr(got, name), getattr(want, name)), name


def test_repeated_faces_any_winding_are_dropped() -> None:
    from wirecut.geometry.mesh import _repeated_faces

    f = np.array([[0, 1, 2], [2, 1, 0], [1, 2, 3], [3, 1, 2], [0, 2, 3]])
    assert _repeated_faces(f, 4).tolist() == [False, True, False, True, False]


def test_edge_use_is_numpys_unique_of_the_edge_keys() -> None:
    # the edge table spelt out with one sort equals np.unique's (numpy is the reference)
    v, f = saddle(n=15)
    n = len(v)
    a, b = f.astype(np.int64), np.roll(f, -1, axis=1).astype(np.int64)
    key = (np.minimum(a, b) * n + np.maximum(a, b)).ravel()
    uniq, inverse, counts = np.unique(key, return_inverse=True, return_counts=True)
    edges, got_counts, got_inverse = edge_use(f, n)
    assert np.array_equal(edges[:, 0] * n + edges[:, 1], uniq)
    assert np.array_equal(got_counts, counts)
    assert np.array_equal(got_inverse, inverse.ravel())


@pytest.mark.parametrize("packed", [True, False])
def test_edge_table_pairs_and_lone_edges_match_a_sort_of_the_inverse(packed) -> None:
    # pairs() and lone() read the grouping the sort made; spelt out from numpy's inverse they
    # are a stable argsort of the manifold positions and the positions of count-1 edges. A
    # huge vertex count forces the unpacked (argsort) path, which must agree to the element.
    v, f = saddle(n=15)
    f = f[np.random.default_rng(5).permutation(len(f))]
    n = len(v) if packed else 2**40
    table = edge_table(f, n)
    a0, b0 = f.astype(np.int64), np.roll(f, -1, axis=1).astype(np.int64)
    key = (np.minimum(a0, b0) * n + np.maximum(a0, b0)).ravel()
    _, inverse, counts = np.unique(key, return_inverse=True, return_counts=True)
    inverse = inverse.ravel()
    inner = np.flatnonzero(counts[inverse] == 2)
    inner = inner[np.argsort(inverse[inner], kind="stable")]
    a, b = table.pairs()
    assert np.array_equal(a, inner[0::2]) and np.array_equal(b, inner[1::2])
    assert np.array_equal(table.lone(), np.flatnonzero(counts[inverse] == 1))
    assert np.array_equal(table.inverse, inverse)
    if not packed:
        _assert_same_table(table, edge_table(f, 2**40))
        small = edge_table(f, len(v))
        assert np.array_equal(table.order, small.order)
        assert np.array_equal(table.edges, small.edges)


def test_a_rewound_edge_table_is_the_table_of_the_rewound_faces() -> None:
    v, f = saddle(n=11)
    flip = np.random.default_rng(8).random(len(f)) < 0.4
    g = f.copy()
    g[flip] = g[flip][:, ::-1]
    _assert_same_table(edge_table(f, len(v)).rewound(flip), edge_table(g, len(v)))


@pytest.mark.parametrize("wound", ["consistent", "away", "soup"])
def test_intake_hands_over_what_a_fresh_computation_gives(wound):
    # intake passes its face areas and edge table on to the target; they must equal what the
    # target would compute from its final faces (the shoelace/cross-product area of each face)
    v, f = saddle(n=15)
    f = f.copy()
    if wound == "away":
        f = f[:, ::-1]
    elif wound == "soup":
        flip = np.random.default_rng(2).random(len(f)) < 0.5
        f[flip] = f[flip][:, ::-1]
    target, _ = target_from_arrays(v, f, JOB)
    tri = target.vertices[target.faces]
    area = 0.5 * np.linalg.norm(np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    assert np.allclose(target.face_areas, area, rtol=1e-12, atol=0)
    _assert_same_table(target.edge_table, edge_table(target.faces, len(target.vertices)))
    edges = np.linalg.norm(tri - np.roll(tri, 1, axis=1), axis=2)
    assert target.mean_edge_mm == pytest.approx(edges.mean(), rel=1e-12)
    assert (target.face_normals[:, 2] > 0).all()


def test_closed_solid_keeps_the_areas_of_the_faces_it_keeps():
    v, f = icosphere(400.0, 3)
    target, _ = target_from_arrays(v, f, JOB)
    tri = target.vertices[target.faces]
    area = 0.5 * np.linalg.norm(np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    assert target.was_closed and len(target.face_areas) == len(target.faces)
    assert np.allclose(target.face_areas, area, rtol=1e-12, atol=0)


def _binary_stl(path, mesh, header=b"wirecut test"):
    mesh.export(path)  # trimesh writes binary STL
    raw = bytearray(path.read_bytes())
    raw[:80] = header.ljust(80, b" ")
    path.write_bytes(bytes(raw))
    return path


@pytest.mark.parametrize("header", [b"wirecut test", b"solid looks like ascii but is binary"])
def test_binary_stl_read_as_trimesh_reads_it(tmp_path, header):
    # trimesh's STL loader is the independent reference for the binary layout
    mesh = _saddle_mesh()
    path = _binary_stl(tmp_path / "part.stl", mesh, header)
    ours = load_target(path, JOB)[0]
    ref = trimesh.load(str(path), process=False)
    theirs = target_from_arrays(ref.vertices, ref.faces, JOB)[0]
    assert np.array_equal(ours.vertices, theirs.vertices)
    assert np.array_equal(ours.faces, theirs.faces)


def test_ascii_stl_still_read(tmp_path):
    mesh = _saddle_mesh()
    path = tmp_path / "part.stl"
    path.write_text(trimesh.exchange.stl.export_stl_ascii(mesh))
    target, _ = load_target(path, JOB)
    assert target.area_mm2 == pytest.approx(mesh.area, rel=1e-6)


@pytest.mark.parametrize("cut", [1, 49, 51])
def test_truncated_binary_stl_is_refused(tmp_path, cut):
    path = _binary_stl(tmp_path / "part.stl", _saddle_mesh())
    path.write_bytes(path.read_bytes()[:-cut])
    with pytest.raises(MeshError, match="part.stl"):
        load_target(path, JOB)


def test_binary_stl_without_triangles_is_refused(tmp_path):
    path = tmp_path / "empty.stl"
    path.write_bytes(b" " * 80 + (0).to_bytes(4, "little"))
    with pytest.raises(MeshError, match="empty.stl"):
        load_target(path, JOB)


def _dome(tilt_deg: float):
    """A 2.4 m x 1.6 m dome 200 mm high, turned ``tilt_deg`` about x."""
    x, y = np.meshgrid(np.linspace(-1200, 1200, 41), np.linspace(-800, 800, 29))
    z = 200.0 * np.cos(np.pi * x / 2400.0) * np.cos(np.pi * y / 1600.0)
    v = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    i, j = np.meshgrid(np.arange(28), np.arange(40), indexing="ij")
    a = (i * 41 + j).ravel()
    f = np.vstack([np.column_stack([a, a + 1, a + 42]), np.column_stack([a, a + 42, a + 41])])
    t = np.radians(tilt_deg)
    rot = np.array([[1, 0, 0], [0, np.cos(t), -np.sin(t)], [0, np.sin(t), np.cos(t)]])
    return v @ rot.T, f, rot


@pytest.mark.parametrize("side", [MoldSide.BELOW, MoldSide.ABOVE])
def test_a_leaning_part_gets_a_hint_for_up(side):
    job = default_job()
    job = dataclasses.replace(job, mold=dataclasses.replace(job.mold, side=side))
    v, f, rot = _dome(30.0)
    _, findings = target_from_arrays(v, f, job)
    hint = [x for x in findings if x.code == "tilted-part"]
    assert len(hint) == 1 and hint[0].severity is Severity.INFO
    # the hint names the turned dome's axis (its mean normal, by symmetry) as the up
    up = np.array([float(s) for s in hint[0].message.split("[")[1].split("]")[0].split(",")])
    want = rot @ np.array([0.0, 0.0, 1.0])
    assert np.allclose(up, want, atol=2e-3)
    assert "30 deg" in hint[0].message
    # the dome as drawn, or turned a little, gets none
    for tilt in (0.0, 10.0):
        v, f, _ = _dome(tilt)
        assert not [x for x in target_from_arrays(v, f, job)[1] if x.code == "tilted-part"]


def test_units_hint_names_every_plausible_unit_with_its_size():
    # 2.4 m written in metres reads 2.4 "mm": metres and feet both give a plausible mold
    v, f, _ = _dome(0.0)
    _, findings = target_from_arrays(v / 1000.0, f, JOB)
    warn = [x for x in findings if x.code == "suspicious-units"]
    assert len(warn) == 1
    msg = warn[0].message
    assert "--units m (2.89 m across)" in msg and "--units ft (0.881 m across)" in msg
    assert "\n" not in msg


def test_a_soup_whose_corners_do_not_quite_meet_is_welded():
    # the dome written face by face with every corner moved up to 1e-4 mm (a soup): welded
    # into the shared-corner mesh, with the same vertex count as the clean one
    v, f, _ = _dome(0.0)
    rng = np.random.default_rng(8)
    soup = v[f] + rng.uniform(-1e-4, 1e-4, (len(f), 3, 3))
    target, findings = target_from_arrays(
        soup.reshape(-1, 3), np.arange(3 * len(f)).reshape(-1, 3), JOB
    )
    clean, _ = target_from_arrays(v, f, JOB)
    assert len(target.vertices) == len(clean.vertices) and len(target.faces) == len(f)
    weld = [x for x in findings if x.code == "mesh-welded"]
    assert len(weld) == 1 and weld[0].severity is Severity.INFO
    assert not [x for x in findings if x.code == "unconnected-faces"]
    # the welded surface has the clean one's boundary: the same count of boundary vertices
    assert target.boundary_vertices.sum() == clean.boundary_vertices.sum()


def test_faces_that_share_no_corner_are_flagged():
    # triangles side by side with gaps between them: nothing to weld, an attention finding
    base = np.array([[0.0, 0.0, 0.0], [10.0, 0.0, 0.0], [0.0, 10.0, 1.0]])
    v = np.concatenate([base + [30.0 * i, 30.0 * j, 0.0] for i in range(6) for j in range(6)])
    _, findings = target_from_arrays(v, np.arange(len(v)).reshape(-1, 3), JOB)
    flag = [x for x in findings if x.code == "unconnected-faces"]
    assert len(flag) == 1 and flag[0].severity is Severity.ATTENTION
    assert not [x for x in findings if x.code == "mesh-welded"]


@pytest.mark.parametrize(
    ("offset_mm", "file_type", "warned"),
    [
        (2.5e6, "stl", True),  # site coordinates: float32 steps of 0.25 mm there
        (0.0, "stl", False),  # near the origin: steps of 6e-5 mm
        (2.5e6, "stl_ascii", False),  # text keeps the digits it was written with
        (2.5e6, "obj", False),
    ],
)
def test_a_binary_stl_far_from_the_origin_is_called_out(tmp_path, offset_mm, file_type, warned):
    # IEEE 754 binary32 has a 24-bit significand: at 2.5e6 (between 2^21 and 2^22) its step is
    # 2^(21 - 23) = 0.25
    mesh = _saddle_mesh()
    mesh.apply_translation([offset_mm, 0.0, 0.0])
    suffix = "stl" if file_type.startswith("stl") else file_type
    path = tmp_path / f"part.{suffix}"
    data = trimesh.exchange.export.export_mesh(mesh, None, file_type=file_type)
    path.write_bytes(data.encode() if isinstance(data, str) else data)
    _, findings = load_target(path, JOB)
    far = [f for f in findings if f.code == "far-from-origin"]
    assert bool(far) == warned
    if warned:
        assert far[0].severity is Severity.ATTENTION
        assert "0.25 mm" in far[0].message
