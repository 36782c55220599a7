"""Wire direction search and the rationalized-surface outputs."""

from __future__ import annotations

import hashlib

import numpy as np
import pytest
import trimesh
from ruled_shapes import grid_target

from wirecut.config import JobProfile, MoldSide, ToleranceSpec
from wirecut.export.rational import (
    deviation_colors,
    rational_mesh,
    write_deviation_map,
    write_rational_mesh,
)
from wirecut.geometry.frames import DirectionFrame, rigid
from wirecut.ruled.direction import search_direction
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.sampling import sample_target

UP = np.array([0.0, 0.0, 1.0])


def _cylinder(axis_deg: float, radius: float = 900.0):
    th = np.radians(axis_deg)

    def f(x, y):
        v = -np.sin(th) * (x - 300.0) + np.cos(th) * (y - 300.0)  # distance across the axis
        return np.sqrt(radius**2 - v**2)

    g = np.linspace(0.0, 600.0, 61)
    return grid_target(f, g, g)


@pytest.mark.parametrize("axis_deg", [30.0, 120.0])
def test_cylinder_direction_is_its_axis(axis_deg):
    # a cylinder is ruled along its axis only (standard): the wire must follow it
    target = _cylinder(axis_deg)
    choice = search_direction(target, None, JobProfile())
    got = np.degrees(choice.best.angle_rad)
    assert abs((got - axis_deg + 90.0) % 180.0 - 90.0) < 1e-6
    assert choice.score["feasible_area_fraction"] == pytest.approx(1.0)
    assert choice.runner_up is not None
    gap = abs((np.degrees(choice.runner_up.angle_rad) - axis_deg + 90.0) % 180.0 - 90.0)
    assert gap >= 10.0
    assert "runner-up" in choice.reason
    assert len(choice.table) == 6  # the uniform 30-degree set, no seeds without an analysis


def test_meanwhile_runs_once_and_changes_nothing():
    target = _cylinder(30.0)
    calls = []
    plain = search_direction(target, None, JobProfile())
    busy = search_direction(target, None, JobProfile(), meanwhile=lambda: calls.append(1))
    assert calls == [1]
    assert busy.best.angle_rad == plain.best.angle_rad and busy.score == plain.score


def test_given_candidates_and_analysis_seeds():
    # a hyperbolic paraboloid z = x y / c is ruled along x and along y (standard)
    g = np.linspace(-200.0, 200.0, 41)
    target = grid_target(lambda x, y: x * y / 400.0 + 300.0, g, g)

    class Seeds:  # the analysis fields the search reads: one reach direction per vertex
        reach_direction = np.tile([0.0, 1.0, 0.0], (len(target.vertices), 1))
        wire_reach_mm = np.full(len(target.vertices), 400.0)
        vertex_area = np.ones(len(target.vertices))

    choice = search_direction(target, Seeds(), JobProfile(), candidates=[np.radians(40.0)])
    angles = sorted(r["angle_deg"] for r in choice.table)
    assert len(angles) == 2 and abs(angles[0] - 40.0) < 1e-6
    assert abs(np.degrees(choice.best.angle_rad) - 90.0) < 3.0  # the seeded ruling (5-deg bin)
    assert choice.table[0]["source"] == "reach"


def _piece_fit(target, angle_deg=0.0):
    frame = DirectionFrame.from_angle(np.radians(angle_deg), UP, MoldSide.BELOW)
    m = rigid(frame.rotation, np.array([0.0, 0.0, 500.0]))
    s = sample_target(target, m, spacing_mm=10.0)
    z = s.points[:, 2]
    return fit_cut(s, float(z.min()), float(z.max()), m, ToleranceSpec(0.5)), m


def test_rational_mesh_is_in_the_part_frame_and_carries_the_deviation(tmp_path):
    target = _cylinder(0.0)
    fit, m = _piece_fit(target)
    mesh = rational_mesh([(fit, m)], tolerance_mm=0.5)
    # the cut of an exact cylinder lies on the cylinder (in the part frame): every vertex
    # inside the target's plan extent is within the fit's max deviation of it
    v = mesh.vertices
    inside = (v[:, 0] > 0) & (v[:, 0] < 600) & (v[:, 1] > 0) & (v[:, 1] < 600)
    radial = np.sqrt((v[inside, 1] - 300.0) ** 2 + v[inside, 2] ** 2)
    assert np.abs(radial - 900.0).max() <= fit.report.max_abs_mm + 0.05
    assert mesh.vertex_attributes["deviation_mm"].shape == (len(v),)
    p1 = write_rational_mesh(mesh, tmp_path / "a.ply")
    p2 = write_rational_mesh(mesh, tmp_path / "b.ply")
    assert p1.read_bytes() == p2.read_bytes()  # deterministic
    back = trimesh.load(p1, process=False)  # trimesh's PLY reader
    assert len(back.vertices) == len(v)
    assert "deviation_mm" in back.metadata["_ply_raw"]["vertex"]["data"].dtype.names
    for ext in ("stl", "obj"):
        out = write_rational_mesh(mesh, tmp_path / f"c.{ext}")
        assert len(trimesh.load(out, process=False).faces) == len(mesh.faces)


def test_colour_ramp_ends_and_middle():
    c = deviation_colors(np.array([-1.0, 0.0, 1.0, np.nan]), 0.5)
    assert c[0, 2] > c[0, 0]  # gouge is blue
    assert c[2, 0] > c[2, 2]  # excess is red
    assert (c[1, :3] > 240).all()  # zero is near white
    assert (c[3, :3] == 128).all()  # unknown is grey


def test_deviation_map_is_a_deterministic_png(tmp_path):
    rng = np.random.default_rng(0)
    xy = rng.uniform(0, 500, (2000, 2))
    d = rng.normal(0, 0.2, 2000)
    out = [np.array([[0, 0], [500, 0], [500, 500], [0, 500]], float)]
    a = write_deviation_map(xy, d, 0.5, tmp_path / "a.png", outlines=out)
    b = write_deviation_map(xy, d, 0.5, tmp_path / "b.png", outlines=out)
    head = a.read_bytes()[:8]
    assert head == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)
    assert hashlib.sha256(a.read_bytes()).digest() == hashlib.sha256(b.read_bytes()).digest()


def test_a_tapered_half_column_is_cut_along_its_generators():
    # a cone is developable and ruled along its generators only (do Carmo 3-5); here a
    # half-column tapering from radius 300 to 420 mm over 2.4 m, its apex 6 m behind the
    # small end, so the generators lie within 2.4 deg of x in plan. A wire 30 deg off them
    # bends along its length too much for strips of the minimum width: its quick fits, a few
    # samples across each narrow trial strip, looked feasible, and it used to win
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).parents[1] / "pieces"))
    from shapes_pieces import height_target

    from wirecut.config import default_job
    from wirecut.geometry.cuttability import analyse_surface

    job = default_job()
    target = height_target(
        np.arange(0.0, 2400.1, 40.0),
        np.linspace(-250.0, 250.0, 26),
        lambda x, y: np.sqrt(np.maximum((300.0 + 0.05 * x) ** 2 - y**2, 0.0)),
        job,
    )
    choice = search_direction(target, analyse_surface(target, job), job)
    got = np.degrees(choice.best.angle_rad)
    assert abs((got + 90.0) % 180.0 - 90.0) <= 3.0
    assert not choice.score["below_min_width"]
    # every direction whose curvature needs strips under the minimum width ranks last
    flags = [r["below_min_width"] for r in choice.table]
    assert any(flags) and flags == sorted(flags)


def test_seed_peaks_are_refined_off_the_bin_centres():
    from wirecut.ruled.direction import _peaks

    rng = np.random.default_rng(5)
    # most directions at exactly 135 deg (a bin edge of the 5-degree histogram), a few noisy
    exact = np.full(900, np.radians(135.0))
    noisy = np.radians(135.0 + rng.normal(0.0, 3.0, 100))
    got = _peaks(np.concatenate([exact, noisy]), np.ones(1000), count=1)
    assert got and np.degrees(got[0]) == pytest.approx(135.0, abs=1e-9)  # not 132.5 or 137.5
    # an axial angle: 179.9 and 0.1 deg are one direction, refined across the wrap to 0
    wrap = np.radians(np.r_[np.full(50, 179.9), np.full(50, 0.1), 0.0])
    got = _peaks(wrap, np.ones(101), count=1)
    assert abs((np.degrees(got[0]) + 90.0) % 180.0 - 90.0) < 0.2


def test_a_hyperbolic_paraboloid_is_cut_along_a_ruling_family():
    # z = (x^2 - y^2) / c is doubly ruled along x = +-y (do Carmo 3-5): the asymptotic
    # directions of every point are those two; the wire must lie along one of them
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).parents[1] / "pieces"))
    from shapes_pieces import height_target

    from wirecut.config import default_job
    from wirecut.geometry.cuttability import analyse_surface

    job = default_job()
    target = height_target(
        np.arange(0.0, 1200.1, 30.0),
        np.arange(0.0, 1000.1, 30.0),
        lambda x, y: ((x - 600.0) ** 2 - (y - 500.0) ** 2) / 8000.0,
        job,
    )
    choice = search_direction(target, analyse_surface(target, job), job)
    got = np.degrees(choice.best.angle_rad) % 180.0
    assert min(abs(got - 45.0), abs(got - 135.0)) < 1e-6


@pytest.mark.parametrize("no_gouge", [False, True])
def test_chord_reach_is_the_sagitta_chord(no_gouge):
    """The chord of a circle of radius R whose sagitta is s: c = 2 sqrt(2 R s - s^2), from
    s = R - sqrt(R^2 - c^2 / 4) (standard circle geometry); s = tol (no-gouge) or 2 tol (the
    best line errs by half the sagitta either side)."""
    from wirecut.ruled.direction import chord_reach_mm

    tol = 0.5
    s = tol if no_gouge else 2.0 * tol
    radii = np.array([0.4, 50.0, 1000.0, 24_000.0])
    expect = np.where(radii > s, 2.0 * np.sqrt(np.abs(2.0 * radii * s - s * s)), 2.0 * radii)
    assert chord_reach_mm(1.0 / radii, tol, no_gouge) == pytest.approx(expect, rel=1e-12)
    # a plane's fit noise (k ~ 1e-16 / mm) is a plane: tens of kilometres, never 0 mm (the
    # difference of squares R^2 - (R - s)^2 cancelled to zero there)
    flat = chord_reach_mm(np.array([1e-16, 1e-20, 0.0]), tol, no_gouge)
    assert flat[0] == pytest.approx(2.0 * np.sqrt(2.0 * 1e16 * s), rel=1e-9)
    assert flat[1] > 1e9 and flat[2] == np.inf
