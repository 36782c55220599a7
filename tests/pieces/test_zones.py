"""Zones: the sides between a surface's creases, each planned with its own wire direction.

A hipped roof is the case known by construction: four planar faces, each cut exactly by a
wire along its eave (its horizontal lines), and the plan areas of its faces are those of two
trapezoids and two triangles.
"""

from __future__ import annotations

import json
from dataclasses import replace

import numpy as np
import pytest
from shapes_pieces import coffer_plate, grid_mesh, hip_roof
from typer.testing import CliRunner

from wirecut.cli import app
from wirecut.config import default_job
from wirecut.geometry.mesh import target_from_arrays
from wirecut.pieces.zones import MIN_ZONE_SHARE, crease_zones, zone_target

JOB = default_job()
UP = np.array([0.0, 0.0, 1.0])


def _planned(tmp_path, v, f) -> dict:
    """plan.json of ``wirecut plan`` on the mesh (v, f), which must exit 0."""
    import trimesh

    mesh = tmp_path / "part.stl"
    trimesh.Trimesh(v, f, process=False).export(mesh)
    out = tmp_path / "plan"
    res = CliRunner().invoke(app, ["plan", str(mesh), "--out", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    return json.loads((out / "plan.json").read_text())


def _plan_area(target, faces) -> float:
    return float((target.face_areas[faces] * np.abs(target.face_normals[faces] @ UP)).sum())


def test_a_hip_roof_has_four_zones_of_known_plan_area():
    v, f = hip_roof(1500.0, 1000.0, 30.0)
    target, _ = target_from_arrays(v, f, JOB)
    zones = crease_zones(target)
    assert len(zones) == 4
    # trapezoids (3000 + 1000) / 2 x 1000 and triangles 2000 x 1000 / 2 (plane geometry)
    areas = [_plan_area(target, z) for z in zones]
    assert areas == pytest.approx([2.0e6, 2.0e6, 1.0e6, 1.0e6], rel=1e-9)
    assert sorted(np.concatenate(zones)) == list(range(len(target.faces)))


def test_a_coffer_has_a_zone_per_chamfer():
    """A plate with a recess ringed by four 45 deg chamfers, meshed with every crease an edge:
    the plate, the floor and each chamfer are zones of their own. The chamfers meet at the
    recess's corners, where the creases around an edge are creases too; a chamfer joined the
    floor there until a bent edge between two creases counted as one. Plan areas by plane
    geometry: the floor 1200 x 700, the chamfers trapezoids (1320 + 1200) / 2 x 60 and
    (820 + 700) / 2 x 60, the plate 2000 x 1500 less 1320 x 820."""
    v, f = coffer_plate()
    target, _ = target_from_arrays(v, f, JOB)
    zones = crease_zones(target)
    areas = [_plan_area(target, z) for z in zones]
    expect = [3.0e6 - 1320 * 820, 1200 * 700, 75_600, 75_600, 45_600, 45_600]
    assert areas == pytest.approx(expect, rel=1e-9)
    assert min(expect) / 3.0e6 > MIN_ZONE_SHARE


def test_a_coffer_is_planned_zone_by_zone(tmp_path):
    """With the wire along one axis two of the chamfers climb 45 deg along it: zone by zone
    every chamfer is cut along its own level lines, every piece exact and with a program."""
    data = _planned(tmp_path, *coffer_plate())
    assert [x["code"] for x in data["findings"]].count("zoned-directions") == 1
    assert data["summary"]["max_deviation_mm"] < 0.01  # planes, fitted exactly
    assert all(p["gcode"] for p in data["pieces"])


def test_a_zone_target_keeps_the_part_frame():
    v, f = hip_roof(900.0, 600.0, 30.0)
    target, _ = target_from_arrays(v, f, JOB)
    zone = zone_target(target, crease_zones(target)[0], JOB)
    # every zone vertex is a vertex of the part, where it was
    d = np.linalg.norm(zone.vertices[:, None, :] - target.vertices[None, ::1, :], axis=2)
    assert d.min(axis=1).max() < 1e-9


def test_no_creases_no_zones():
    v, f = grid_mesh(np.linspace(0, 1000, 21), np.linspace(0, 600, 13), lambda x, y: 0.1 * x)
    target, _ = target_from_arrays(v, f, JOB)
    assert crease_zones(target) == []


def test_a_narrow_side_joins_its_neighbour():
    """A plate folded twice 8 mm apart: the 8 mm band between the folds has 0.8 % of the plan
    area, under MIN_ZONE_SHARE, and joins a side; two zones remain."""
    xs = np.r_[np.linspace(0, 490, 99), np.linspace(500, 508, 5), np.linspace(518, 1000, 97)]

    def height(x, y):
        return 300.0 + np.clip(x - 500.0, 0.0, 8.0) * 0.5  # slopes 0, 0.5, 0

    v, f = grid_mesh(xs, np.linspace(0, 600, 25), height)
    target, _ = target_from_arrays(v, f, JOB)
    assert 8.0 / 1000.0 < MIN_ZONE_SHARE
    zones = crease_zones(target)
    assert len(zones) == 2
    assert sum(len(z) for z in zones) == len(target.faces)


def test_a_hip_roof_is_planned_zone_by_zone(tmp_path):
    """With one wire direction two of the roof's faces climb 30 deg along the wire, more than
    the default towers can tilt a ruling (800 mm of y travel over a 1600 mm span: 26.6 deg):
    each zone gets its own direction, every piece a program, and every face is exact."""
    data = _planned(tmp_path, *hip_roof(900.0, 600.0, 30.0, n=13))
    codes = [x["code"] for x in data["findings"]]
    assert codes.count("zoned-directions") == 1
    assert "strips-below-bound" not in codes  # the zones' own bounds are not the part's
    assert data["summary"]["max_deviation_mm"] < 0.01  # planes, fitted exactly
    assert all(p["gcode"] for p in data["pieces"])
    ids = [p["id"] for p in data["pieces"]]
    assert ids == [f"P{k:02d}" for k in range(1, len(ids) + 1)]
    for p in data["pieces"]:
        # each piece's wire runs along its face's eave: along x on the long faces (their
        # outline lies on one side of the ridge, y of one sign), along y on the ends
        xy = np.asarray(p["region_part_xy_mm"])
        wire = np.abs(np.asarray(p["wire_direction_part"]))
        long_face = np.all(xy[:, 1] >= -1e-6) or np.all(xy[:, 1] <= 1e-6)
        ends = np.all(np.abs(xy[:, 0]) >= 300.0 - 1e-6)
        assert long_face or ends
        if ends and not long_face:
            assert wire[1] == pytest.approx(1.0, abs=1e-6)
        elif long_face and not ends:
            assert wire[0] == pytest.approx(1.0, abs=1e-6)


def test_a_steep_plane_is_cut_along_its_horizontal_lines():
    """A plane climbing 30 deg along y: along x the rulings are level; along y they would
    climb beyond the y travel. The direction search picks x (the score counts only what the
    towers can drive, MachineSpec.drivable_tilt)."""
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.ruled.direction import search_direction

    slope = np.tan(np.radians(30.0))
    v, f = grid_mesh(np.linspace(0, 1200, 25), np.linspace(0, 800, 17), lambda x, y: slope * y)
    target, _ = target_from_arrays(v, f, JOB)
    choice = search_direction(target, analyse_surface(target, JOB), JOB)
    assert abs(choice.best.wire_part[0]) == pytest.approx(1.0, abs=1e-9)
    # a machine twice as tall tilts 30 deg rulings (1600 mm over 1600 mm): both would do
    tall = replace(JOB, machine=replace(JOB.machine, travel_y_mm=(0.0, 1600.0)))
    assert tall.machine.drivable_tilt() == pytest.approx(1.0)
    assert JOB.machine.drivable_tilt() == pytest.approx(0.5)  # 800 / 1600


def test_a_noisy_mesh_has_no_zones():
    """Noise of 3 mm on a panel meshed at 20 mm bends many edges past the crease angle: its
    crease sides are many small patches (over MAX_SIDES), not faces of a part."""
    from wirecut.geometry.creases import crease_sides
    from wirecut.pieces.zones import MAX_SIDES

    rng = np.random.default_rng(5)
    v, f = grid_mesh(np.linspace(0, 3000, 151), np.linspace(0, 2000, 101), lambda x, y: 0 * x)
    v[:, 2] += rng.normal(0.0, 3.0, len(v))
    target, _ = target_from_arrays(v, f, JOB)
    sides = crease_sides(target)
    assert sides is not None and sides[0] > MAX_SIDES
    assert crease_zones(target) == []


def test_the_shortfall_counts_what_is_left_undone():
    """A piece without a program counts its whole area; one with a program, the share of its
    area out of tolerance; fewer pieces break a tie (plan._shortfall)."""
    from types import SimpleNamespace

    from wirecut.plan import _shortfall

    def piece(area, program, feasible):
        return SimpleNamespace(
            samples=SimpleNamespace(area_mm2=area),
            program=object() if program else None,
            deviation=SimpleNamespace(feasible_area_fraction=feasible),
        )

    one = [piece(1000.0, False, 1.0), piece(2000.0, True, 0.75)]
    assert _shortfall(one) == (1000.0 + 500.0, 2)
    clean = [piece(1500.0, True, 1.0)] * 3
    assert _shortfall(clean) == (0.0, 3)
    assert _shortfall(clean) < _shortfall(one)
    assert _shortfall(clean[:2]) < _shortfall(clean)  # as little undone, in fewer pieces


def test_a_steep_runner_up_is_not_split():
    """A chamfer 60 mm x 820 mm sloping 45 deg, on a machine of 1000 mm span (800 mm usable):
    level, the wire is along its 820 mm and needs two strips; 30 deg off level it needs one
    and climbs 0.5, past half the drivable tilt (700 / 1000 = 0.7), where the extended
    rulings passed 275 mm below the bed. The search ranks the level wire first and the split
    does not try the steep runner-up for its fewer pieces."""
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.pieces.split import _candidates
    from wirecut.ruled.direction import search_direction

    small = replace(
        JOB,
        machine=replace(
            JOB.machine, span_mm=1000.0, travel_x_mm=(0.0, 900.0), travel_y_mm=(0.0, 700.0)
        ),
    )
    v, f = grid_mesh(np.linspace(0, 60, 7), np.linspace(0, 820, 42), lambda x, y: 300.0 - x)
    target, _ = target_from_arrays(v, f, small)
    choice = search_direction(target, analyse_surface(target, small), small)
    assert abs(choice.best.wire_part[1]) == pytest.approx(1.0, abs=1e-9)  # along y: level
    steep = [r for r in choice.table if r["steep"]]
    assert steep and all(r["climb"] > 0.35 for r in steep)
    assert _candidates(choice) == [choice.best]


def test_a_coffer_on_a_plain_grid_has_a_zone_per_chamfer():
    """The same coffer sampled on a plain grid: at two of its corners the hips run across the
    grid's diagonals and zigzag over the triangles, so no edge there is a crease by the
    contrast test. The zones are cut at every bent edge instead (10 deg, no contrast): the
    slivers of triangles along the zigzag join a neighbour, and each chamfer is a zone within
    2 % of its plane-geometry area."""

    def coffer(x, y):
        d = np.maximum(np.maximum(np.abs(x) - 600.0, 0.0), np.maximum(np.abs(y) - 350.0, 0.0))
        return 240.0 + np.minimum(d, 60.0)

    xs = np.unique(np.r_[np.linspace(-1000, 1000, 81), -660, -600, 600, 660])
    ys = np.unique(np.r_[np.linspace(-750, 750, 61), -410, -350, 350, 410])
    target, _ = target_from_arrays(*grid_mesh(xs, ys, coffer), JOB)
    areas = [_plan_area(target, z) for z in crease_zones(target)]
    expect = [3.0e6 - 1320 * 820, 1200 * 700, 75_600, 75_600, 45_600, 45_600]
    assert len(areas) == 6
    assert areas == pytest.approx(expect, rel=0.02)
