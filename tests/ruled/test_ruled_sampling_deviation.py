"""Sampling and signed deviation against independent references."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
import trimesh
from ruled_shapes import GridTarget, grid_target, height_field_samples

from wirecut.config import MoldSide, Policy, ToleranceSpec
from wirecut.geometry.frames import rigid, rotation_part_to_machine
from wirecut.ruled.deviation import signed_deviation, weighted_quantile
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.model import RuledCut
from wirecut.ruled.sampling import sample_target, spacing_for

UP = np.array([0.0, 0.0, 1.0])


def _setup(wire=(0.0, 1.0, 0.0), shift=(0.0, 0.0, 0.0)) -> np.ndarray:
    rot = rotation_part_to_machine(np.array(wire), UP, MoldSide.BELOW)
    return rigid(rot, np.array(shift))


def _sphere_target(radius=800.0, half=100.0, n=41) -> GridTarget:
    g = np.linspace(-half, half, n)
    return grid_target(lambda x, y: np.sqrt(radius**2 - x**2 - y**2) - radius + 100.0, g, g)


def test_weights_sum_to_the_mesh_area_and_spacing_holds():
    target = _sphere_target()
    h = 3.0
    s = sample_target(target, _setup(), spacing_mm=h)
    area = trimesh.Trimesh(target.vertices, target.faces, process=False).area  # trimesh's own
    assert s.area_mm2 == pytest.approx(area, rel=1e-12)
    # every face's lattice has at most h between neighbours: its nearest other sample of the
    # same face is closer than h (the lattice is built that way)
    from scipy.spatial import cKDTree

    pts = s.points[s.face == 100]
    d, _ = cKDTree(pts).query(pts, k=2)
    assert d[:, 1].max() <= h + 1e-9


def test_region_clip_keeps_the_polygon_area_of_a_plane():
    g = np.linspace(0.0, 200.0, 21)
    target = grid_target(lambda x, y: 0.0 * x + 10.0, g, g)
    region = shapely.Polygon([(20, 30), (170, 30), (170, 130), (20, 130)])
    s = sample_target(target, _setup(), region=region, spacing_mm=2.0)
    # a flat plane's area inside a rectangle is the rectangle's (plane geometry); the lattice
    # resolves the cut through faces to about one spacing along the outline
    assert s.area_mm2 == pytest.approx(region.area, abs=region.length * 2.0)
    assert (s.weights == 0).sum() > 0  # zero-weight samples on the outline
    assert shapely.intersects_xy(region.buffer(1e-6), s.plan_xy[:, 0], s.plan_xy[:, 1]).all()


def test_reported_max_within_one_percent_of_a_dense_brute_force():
    target = _sphere_target(half=60.0, n=25)
    m = _setup()
    tol = ToleranceSpec(0.5, Policy.BALANCED)
    h = spacing_for(tol.surface_mm, 1.0 / 800.0, 20.0)
    s = sample_target(target, m, spacing_mm=h)
    fit = fit_cut(s, -60.0, 60.0, m, tol)
    verts, faces = fit.cut.to_mesh(steps_along_wire=50)
    mesh = trimesh.Trimesh(verts, faces, process=False)
    dense = sample_target(target, m, spacing_mm=h / 4.0)
    inside = (dense.points[:, 0] > fit.cut.left[0, 0]) & (dense.points[:, 0] < fit.cut.left[-1, 0])
    # closest point on the cut's triangle mesh (trimesh.proximity.closest_point), unsigned
    _, dist, _ = trimesh.proximity.closest_point(mesh, dense.points[inside])
    assert fit.report.max_abs_mm == pytest.approx(dist.max(), rel=0.01)


def test_signed_deviation_of_an_offset_plane_is_the_point_plane_distance():
    # distance of a point from the plane y = a x + b z + c is |dy| / sqrt(1 + a^2 + b^2)
    # (standard point-plane distance); + when the cut lies above (waste side)
    a, b, c, d = 0.3, -0.2, 50.0, 0.7
    xs, zs = np.linspace(0, 100, 21), np.linspace(0, 80, 17)
    s = height_field_samples(lambda x, z: a * x + b * z + c, xs, zs)
    knots = np.linspace(-10, 110, 7)
    cut = RuledCut(
        np.column_stack([knots, a * knots + c + d]),
        np.column_stack([knots, a * knots + b * 80.0 + c + d]),
        0.0,
        80.0,
        np.eye(4),
    )
    r = signed_deviation(cut, s, ToleranceSpec(0.5))
    assert np.allclose(r.signed, d / np.sqrt(1 + a * a + b * b), atol=1e-12)
    r2 = signed_deviation(cut, s, ToleranceSpec(0.5))
    assert r2.excess_area_fraction == 1.0 and r2.gouge_area_fraction == 0.0
    lower = RuledCut(cut.left - [0, 2 * d], cut.right - [0, 2 * d], 0.0, 80.0, np.eye(4))
    r3 = signed_deviation(lower, s, ToleranceSpec(0.5))
    assert np.allclose(r3.signed, -d / np.sqrt(1 + a * a + b * b), atol=1e-12)
    assert r3.gouge_area_fraction == 1.0 and r3.feasible_area_fraction == 0.0


def test_height_at_matches_a_per_row_interpolation():
    rng = np.random.default_rng(7)
    k = 40
    knots = np.sort(rng.uniform(0, 500, k))
    knots = np.unique(knots)
    skew = rng.uniform(-0.4, 0.4) * np.min(np.diff(knots)) * np.ones(len(knots))
    cut = RuledCut(
        np.column_stack([knots - skew / 2, rng.uniform(100, 200, len(knots))]),
        np.column_stack([knots + skew / 2, rng.uniform(100, 200, len(knots))]),
        0.0,
        300.0,
        np.eye(4),
    )
    x = rng.uniform(knots[0], knots[-1], 500)
    z = rng.uniform(0, 300, 500)
    got = cut.height_at(x, z)
    ref = np.empty(len(x))
    for i in range(len(x)):  # reference: numpy's 1D interpolation of the section polyline
        q = cut.at_plane(z[i])
        ref[i] = np.interp(x[i], q[:, 0], q[:, 1], left=np.nan, right=np.nan)
    ok = np.isfinite(ref)
    assert np.allclose(got[ok], ref[ok], atol=1e-9)
    assert np.isnan(got[~ok]).all()


def test_parallel_rulings_are_located_as_the_bisection_locates_them():
    rng = np.random.default_rng(17)
    knots = np.unique(np.round(rng.uniform(0, 500, 60), 1))
    y = rng.uniform(100, 200, (len(knots), 2))
    cut = RuledCut(np.column_stack([knots, y[:, 0]]), np.column_stack([knots, y[:, 1]]),
                   0.0, 300.0, np.eye(4))  # fmt: skip
    # points on the knots themselves, between them, beyond both ends, and z outside the faces
    x = np.concatenate([knots, rng.uniform(-20, 520, 2000), [knots[0], knots[-1]]])
    z = np.concatenate([rng.uniform(-50, 350, len(x) - 2), [0.0, 300.0]])
    fast = cut.strip_of(x, z)
    assert cut._parallel_sorted()
    slow_cut = RuledCut(cut.left, cut.right, cut.z_left, cut.z_right, cut.part_to_machine)
    object.__setattr__(slow_cut, "_parallel", False)  # the general bisection
    slow = slow_cut.strip_of(x, z)
    for a, b in zip(fast, slow, strict=True):
        assert np.array_equal(a, b)


def test_weighted_quantile_of_equal_weights_is_the_order_statistic():
    v = np.arange(1.0, 101.0)
    # the 95th of 1..100 with equal weights is 95 (lower order statistic, definition)
    assert weighted_quantile(v, np.ones(100), 0.95) == 95.0


def test_overhang_is_reported_undercut_and_never_feasible():
    g = np.linspace(0.0, 200.0, 11)
    floor = grid_target(lambda x, y: 0.0 * x, g, g)
    # the underside of a ledge 50 mm above the floor: its normals look down, away from the
    # waste side (machine +y), so no wire from above reaches it (by construction)
    ledge_v = np.array(
        [[50.0, 50.0, 50.0], [150.0, 50.0, 50.0], [150.0, 150.0, 50.0], [50.0, 150.0, 50.0]]
    )
    ledge_f = np.array([[0, 2, 1], [0, 3, 2]]) + len(floor.vertices)
    verts = np.vstack([floor.vertices, ledge_v])
    faces = np.vstack([floor.faces, ledge_f])
    normals = np.vstack([floor.face_normals, np.tile([0.0, 0.0, -1.0], (2, 1))])
    target = GridTarget(verts, faces, normals, UP)
    m = _setup(wire=(1.0, 0.0, 0.0), shift=(0.0, 0.0, 0.0))
    s = sample_target(target, m, spacing_mm=5.0)
    fit = fit_cut(s, 0.0, 200.0, m, ToleranceSpec(0.5))
    r = fit.report
    ledge_area, total = 100.0 * 100.0, 200.0 * 200.0 + 100.0 * 100.0
    assert r.undercut_area_fraction == pytest.approx(ledge_area / total, rel=1e-9)
    assert not r.within[s.undercut].any()
    assert r.feasible_area_fraction == pytest.approx(1 - ledge_area / total, rel=1e-6)


def test_report_json_has_the_plan_keys_and_bad_input_is_refused():
    from wirecut.errors import JobError

    s = height_field_samples(
        lambda x, z: 0.1 * x + 5.0, np.linspace(0, 50, 11), np.linspace(0, 40, 9)
    )
    fit = fit_cut(s, 0.0, 40.0, np.eye(4), ToleranceSpec(0.5))
    # per-piece keys of plan.json (docs of the outside contract, /work/shared/interface.md)
    assert set(fit.report.to_json()) == {
        "max_deviation_mm",
        "rms_deviation_mm",
        "gouge_area_fraction",
        "undercut_area_fraction",
        "feasible_area_fraction",
    }
    assert fit.report.max_abs_mm < 1e-9  # a plane is ruled both ways (standard)
    with pytest.raises(JobError, match="z = 100"):
        fit_cut(s, 100.0, 200.0, np.eye(4), ToleranceSpec(0.5))  # no samples between the faces
    with pytest.raises(JobError, match="z_left < z_right"):
        fit_cut(s, 40.0, 0.0, np.eye(4), ToleranceSpec(0.5))


def test_merged_samples_keep_area_and_distinct_points() -> None:
    # copies of a shared vertex merge into the first, weights summed: the same area, the
    # same distinct points, in first-seen order (construction)
    from wirecut.ruled.sampling import TargetSamples

    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 0, 0], [2, 0, 0], [1, 0, 0]], float)
    n = len(pts)
    s = TargetSamples(
        pts, np.tile([0.0, 1.0, 0.0], (n, 1)), np.array([1.0, 2.0, 3.0, 4.0, 5.0]),
        np.zeros(n, bool), pts[:, :2], np.arange(n), 1.0,
    )  # fmt: skip
    m = s.merged()
    assert np.array_equal(m.points, pts[[0, 1, 3]])
    assert np.array_equal(m.weights, [4.0, 7.0, 4.0])
    assert np.array_equal(m.face, [0, 1, 3])
    assert m.area_mm2 == s.area_mm2


def test_thinned_samples_keep_area_and_outline() -> None:
    # one weighted sample per cell carrying the cell's weight; zero-weight (outline) samples
    # all kept (construction)
    from wirecut.ruled.sampling import TargetSamples

    rng = np.random.default_rng(4)
    xy = rng.uniform(0.0, 100.0, (2000, 2))
    pts = np.column_stack([xy, np.zeros(len(xy))])
    w = rng.uniform(0.5, 1.5, len(xy))
    w[:50] = 0.0
    n = len(xy)
    s = TargetSamples(pts, np.tile([0.0, 1.0, 0.0], (n, 1)), w, np.zeros(n, bool), xy,
                      np.arange(n), 1.0)  # fmt: skip
    t = s.thinned(10.0)
    assert np.isclose(t.area_mm2, s.area_mm2)
    assert (t.weights == 0).sum() == 50
    cells = {tuple(c) for c in np.floor((t.plan_xy[t.weights > 0] - xy[w > 0].min(0)) / 10.0)}
    assert len(cells) == (t.weights > 0).sum() <= 100


@pytest.mark.parametrize("radius", [400.0, 1500.0])
def test_detail_spacing_of_a_sphere_is_the_sagitta_chord(radius):
    # a sphere of radius R bends by 1/R in every direction: the chord whose sagitta is s is
    # sqrt(8 s R) (sagitta s = c^2 / 8R for c << R, standard circle geometry)
    from wirecut.ruled.sampling import DETAIL_SAG_MM, _prepared

    # on a grid's right triangles the normals of two faces differ as at points farther apart
    # than their centroids (a flat triangle's normal is the surface's at the middle of its
    # long side, for a quadratic), so the estimate errs short: never longer than the chord
    target = _sphere_target(radius=radius, half=100.0, n=61)
    want = np.sqrt(8.0 * DETAIL_SAG_MM * radius)
    assert 0.7 * want <= _prepared(target).detail_spacing() <= 1.02 * want


def test_a_fine_mesh_is_judged_at_its_curvature_spacing_a_coarse_one_as_before():
    from wirecut.ruled.sampling import JUDGING_DENSITY, _prepared, judging_samples, judging_spacing

    region = shapely.box(-90.0, -90.0, 90.0, 90.0)
    # coarse: 10 mm edges, above the detail spacing of R = 1500 mm (5.5 mm): the default rule
    coarse = _sphere_target(radius=1500.0, half=100.0, n=21)
    assert judging_spacing(coarse) == pytest.approx(
        np.clip(_prepared(coarse).median_edge, 1, 20) / np.sqrt(JUDGING_DENSITY)
    )
    s = judging_samples(coarse, _setup(), region)
    ref = sample_target(coarse, _setup(), region, density=JUDGING_DENSITY).merged()
    assert len(s) == len(ref)
    # fine: 1 mm edges, far below it; judged on far fewer points than the mesh has vertices,
    # with the area kept and no gap wider than a few judging spacings
    fine = _sphere_target(radius=1500.0, half=100.0, n=201)
    h = judging_spacing(fine)
    assert h == pytest.approx(_prepared(fine).detail_spacing() / 2.0)
    assert h > 2.0 * _prepared(fine).median_edge
    s = judging_samples(fine, _setup(), region)
    inside = s.weights > 0
    assert inside.sum() < 0.25 * (180 / 1.0) ** 2
    lattice = sample_target(fine, _setup(), region, spacing_mm=h).merged()
    assert s.area_mm2 == pytest.approx(lattice.area_mm2, rel=1e-12)
    from scipy.spatial import cKDTree

    g = np.linspace(-85, 85, 60)
    probe = np.column_stack([np.repeat(g, 60), np.tile(g, 60)])
    d, _ = cKDTree(s.plan_xy[inside]).query(probe)
    assert d.max() <= h


def test_samples_under_another_part_of_the_surface_are_undercut():
    # a 600 mm sheet at z = 100 with a 200 mm sheet 200 mm over its middle (a real target, so
    # that the undercut test by rays from the waste side applies)
    from wirecut.config import default_job
    from wirecut.geometry.mesh import target_from_arrays

    def sheet(half, z, n):
        x, y = np.meshgrid(np.linspace(-half, half, n), np.linspace(-half, half, n))
        v = np.column_stack([x.ravel(), y.ravel(), np.full(n * n, z)])
        i, j = np.meshgrid(np.arange(n - 1), np.arange(n - 1), indexing="ij")
        a = (i * n + j).ravel()
        f = np.vstack(
            [np.column_stack([a, a + 1, a + n + 1]), np.column_stack([a, a + n + 1, a + n])]
        )
        return v, f

    (v1, f1), (v2, f2) = sheet(300.0, 100.0, 13), sheet(100.0, 300.0, 5)
    target, _ = target_from_arrays(
        np.vstack([v1, v2]), np.vstack([f1, f2 + len(v1)]), default_job()
    )
    s = sample_target(target, _setup(), spacing_mm=20.0)
    part = s.plan_xy
    low = s.points[:, 1] < s.points[:, 1].max() - 100.0  # machine y is the height here
    under = low & (np.abs(part) < 100.0 - 1e-6).all(axis=1)
    clear = low & (np.abs(part) > 100.0 + 1e-6).any(axis=1)
    assert under.sum() > 20 and clear.sum() > 100
    assert s.undercut[under].all() and not s.undercut[clear].any()
    assert not s.undercut[~low].any()  # the upper sheet is seen
