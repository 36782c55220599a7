"""Break lines: the strips end at creases and steps that run along the sweep."""

from __future__ import annotations

import math

import numpy as np
import pytest
from shapes_pieces import height_target, quick_job

import wirecut.pieces.split as split_module
from wirecut.geometry.creases import break_lines, segments
from wirecut.geometry.frames import DirectionFrame
from wirecut.geometry.mesh import target_from_arrays
from wirecut.pieces.split import StripPlan, greedy_strips, split_pieces

UP = np.array([0.0, 0.0, 1.0])
WIRE_Y = np.array([0.0, 1.0])  # the wire along y, the sweep along x


def frame(deg: float) -> DirectionFrame:
    return DirectionFrame.from_angle(math.radians(deg), UP, "below")


def roof(slope_deg: float):
    """Two planes meeting in a ridge along x at y = 300 (a crease of 2 * slope_deg)."""
    k = math.tan(math.radians(slope_deg))
    xs = np.linspace(0.0, 600.0, 13)
    ys = np.linspace(0.0, 600.0, 25)
    return height_target(xs, ys, lambda x, y: 200.0 - k * np.abs(y - 300.0))


def step_target(job=None, y_step: float = 330.0):
    """Two levels 80 mm apart (each bent gently along x) joined by a vertical wall along x."""
    job = job or quick_job()
    xs = np.linspace(0.0, 600.0, 25)

    def level(y0, y1, z0, n):
        ys = np.linspace(y0, y1, n)
        gx, gy = np.meshgrid(xs, ys, indexing="ij")
        gz = z0 + 20.0 * np.sin(np.pi * gx / 600.0)
        return np.column_stack([gx.ravel(), gy.ravel(), gz.ravel()]), len(ys)

    lo, n_lo = level(0.0, y_step, 200.0, 12)
    hi, n_hi = level(y_step, 600.0, 280.0, 10)
    v = np.vstack([lo, hi])
    faces = []

    def cells(off, ny):
        for i in range(len(xs) - 1):
            for j in range(ny - 1):
                a = off + i * ny + j
                b, c, d = a + ny, a + ny + 1, a + 1
                faces.extend([(a, b, c), (a, c, d)])

    cells(0, n_lo)
    cells(len(lo), n_hi)
    for i in range(len(xs) - 1):  # the wall: lower level's last row up to the upper's first
        a, b = i * n_lo + n_lo - 1, (i + 1) * n_lo + n_lo - 1
        c, d = len(lo) + (i + 1) * n_hi, len(lo) + i * n_hi
        faces.extend([(a, b, c), (a, c, d)])
    target, _ = target_from_arrays(v, np.asarray(faces), job)
    return target


def test_a_ridge_along_the_sweep_is_a_break_line() -> None:
    assert np.allclose(break_lines(roof(8.0), WIRE_Y, 25.0), [300.0])


def test_a_gentle_ridge_is_not() -> None:
    # a crease of 2 x 2 deg stays under CREASE_DEG: the width search handles it as curvature
    assert len(break_lines(roof(2.0), WIRE_Y, 25.0)) == 0


def test_a_ridge_along_the_wire_is_no_break() -> None:
    # the wire lies in that ridge: it is a ruling, not a line a strip must end at
    assert len(break_lines(roof(8.0), np.array([1.0, 0.0]), 25.0)) == 0


def test_a_step_is_one_break_line() -> None:
    # the wall's foot and top are two creases on the same line
    assert np.allclose(break_lines(step_target(), WIRE_Y, 25.0), [330.0])


def test_segments_keep_every_part_at_least_the_minimum_width() -> None:
    assert segments(0.0, 1000.0, np.array([400.0]), 100.0) == [(0.0, 400.0), (400.0, 1000.0)]
    # 30 mm from the start and 60 mm from the end: both left out
    assert segments(0.0, 1000.0, np.array([30.0, 940.0]), 100.0) == [(0.0, 1000.0)]
    # of two lines 50 mm apart the first is kept
    assert segments(0.0, 1000.0, np.array([500.0, 450.0]), 100.0) == [
        (0.0, 450.0),
        (450.0, 1000.0),
    ]


def test_joined_plans_follow_each_other() -> None:
    a = StripPlan(np.array([0.0, 100.0, 250.0]), np.array([True, True]), 5)
    b = StripPlan(np.array([250.0, 400.0]), np.array([False]), 2)
    j = StripPlan.joined([a, b])
    assert np.array_equal(j.cuts, [0.0, 100.0, 250.0, 400.0])
    assert np.array_equal(j.feasible, [True, True, False])
    assert j.evaluations == 7


def test_a_rest_before_a_break_moves_the_cut_back() -> None:
    # strips of at most 290 mm pass; the segment ends at a break at 600: 290 + 290 leaves 20
    # mm, narrower than the 100 mm minimum, so the second cut moves back to 500 rather than
    # the last strip running past the break
    plan = greedy_strips(0.0, 600.0, lambda a, b: b - a <= 290.0, 1000.0, 100.0, 10.0,
                         end_is_cut=True)  # fmt: skip
    assert np.allclose(plan.cuts, [0.0, 290.0, 500.0, 600.0])
    assert plan.feasible.all()
    # at the footprint's edge the last strip is widened instead (nothing lies beyond it)
    edge = greedy_strips(0.0, 600.0, lambda a, b: b - a <= 290.0, 1000.0, 100.0, 10.0)
    assert edge.cuts[-1] > 600.0
    # ... unless the rest is a sliver narrower than a grid step: 290 + 290 + 4 mm of surface
    # would make a 100 mm blank around a 4 mm ribbon; the cut before it moves back instead
    sliver = greedy_strips(0.0, 584.0, lambda a, b: b - a <= 290.0, 1000.0, 100.0, 10.0)
    assert np.allclose(sliver.cuts, [0.0, 290.0, 484.0, 584.0])
    assert sliver.feasible.all()


@pytest.fixture(scope="module")
def stepped():
    job = quick_job()
    return step_target(job), job


def test_the_strips_of_a_step_end_at_it(stepped) -> None:
    target, job = stepped
    result = split_pieces(target, None, frame(90.0), job)  # wire along y, across the step
    assert np.any(np.isclose(result.cuts_mm, 330.0))
    tol = job.tolerance.surface_mm
    for p in result.pieces:
        assert p.extra["feasible"]
        assert p.fit.report.max_abs_mm <= tol
        # nothing of the piece is hidden: the wall and the other level lie beyond its outline
        assert not p.fit.samples.undercut.any()
    assert not result.findings


def test_without_break_lines_a_strip_straddles_the_step(stepped, monkeypatch) -> None:
    # the comparison the break lines are for: on the strip grid alone one strip holds both
    # levels and cannot be cut within tolerance at any width
    target, job = stepped
    monkeypatch.setattr(split_module, "break_lines", lambda *a: np.zeros(0))
    result = split_pieces(target, None, frame(90.0), job)
    assert not np.any(np.isclose(result.cuts_mm, 330.0))
    assert any(f.code == "strip-infeasible" for f in result.findings)


def test_the_final_fit_overrules_a_failed_coarse_fit() -> None:
    # the width search's coarse fits are made to fail everywhere; the pieces' dense final fits
    # are within the fit's share of the tolerance, so no piece is called infeasible and no
    # finding says a fit within its share went beyond it
    from dataclasses import replace

    from wirecut.ruled.fit import fit_cut

    def pessimist(samples, *args, **kwargs):
        fit = fit_cut(samples, *args, **kwargs)
        if "enough_mm" in kwargs:  # a fit of the width search
            fit = replace(fit, report=replace(fit.report, max_abs_mm=10.0))
        return fit

    job = quick_job()
    target = roof(0.0)  # a plane
    result = split_pieces(target, None, frame(90.0), job, fitter=pessimist)
    assert result.pieces
    assert all(p.extra["feasible"] for p in result.pieces)
    assert not result.findings
    assert result.infeasible_area_mm2 == 0.0


def test_a_stepped_mold_is_planned_within_tolerance_and_its_wall_is_accounted_for() -> None:
    # the whole job on the step, wire across it (the only direction whose sections have no
    # vertical wall): every piece gets a program within tolerance, nothing needs attention,
    # and the wall's area is named as lying in no piece
    from wirecut.plan import make_plan

    job = quick_job()
    target = step_target(job)
    plan = make_plan(target, job)
    tol = job.tolerance.surface_mm
    assert plan.pieces
    for pp in plan.pieces:
        assert pp.program is not None
        assert pp.deviation.max_abs_mm <= tol
    attention = [f for f in plan.findings if f.severity.value != "info"]
    assert not attention, attention
    wall = 600.0 * 80.0  # mm^2, by construction
    outside = [f for f in plan.findings if f.code == "surface-outside-pieces"]
    assert len(outside) == 1
    assert f"{wall / 1e6:.3f} m^2" in outside[0].message


def test_the_direction_search_lays_its_trial_strips_between_break_lines() -> None:
    # across the step the trial strips of the quick score end at the wall, as the split's
    # will: that direction keeps all its area within tolerance; without the break lines
    # its strips straddle the wall and it lost to the wire along the step
    from wirecut.ruled.direction import _coarse_samples, _score

    job = quick_job()
    target = step_target(job)
    across = frame(90.0)
    samples = _coarse_samples(target, across)
    lines = break_lines(target, WIRE_Y, 25.0)
    with_lines = _score(samples, job, lines=lines)
    without = _score(samples, job)
    assert with_lines[0] >= 0.995
    assert without[0] < with_lines[0] - 0.05


def test_pinned_knots_move_the_nearest_knot_or_add_one() -> None:
    from wirecut.ruled.fit import pinned_knots

    knots = np.linspace(0.0, 100.0, 11)  # every 10 mm
    moved = pinned_knots(knots, np.array([33.0, 61.0, 2.0, 98.0, 500.0, 0.0]))
    # the knots at 30 and 60 moved onto 33 and 61
    assert 33.0 in moved and 61.0 in moved and 30.0 not in moved and 60.0 not in moved
    # 2 and 98 would move an end knot: a knot is added on each instead; 500 and 0 lie outside
    # (or on a knot already)
    assert list(moved[:3]) == [0.0, 2.0, 10.0] and list(moved[-3:]) == [90.0, 98.0, 100.0]
    assert len(moved) == 13 and np.all(np.diff(moved) > 0)
    # a step's wall: foot and top 4 mm apart, both nearest one knot: it takes one, a knot is
    # added on the other
    wall = pinned_knots(knots, np.array([48.0, 52.0]))
    assert 48.0 in wall and 52.0 in wall and len(wall) == 12
    assert np.all(np.diff(wall) > 0)
    # many short creases within one spacing (a noisy mesh's): one knot moved, one added
    noise = pinned_knots(knots, np.array([41.0, 43.0, 45.0, 47.0, 49.0]))
    assert len(noise) == 12
    # ... except the oblique creases' positions, which always get theirs
    kept = pinned_knots(knots, np.array([41.0, 43.0, 45.0]), must=np.array([47.0, 49.0]))
    assert 47.0 in kept and 49.0 in kept


def test_skew_limits_follow_the_gaps_of_pinned_knots() -> None:
    from wirecut.ruled.skew import CROSSING, knot_gaps, monotone_seed

    even = np.linspace(0.0, 100.0, 11)
    assert knot_gaps(even) == even[1] - even[0]
    knots = np.array([0.0, 10.0, 12.0, 20.0, 30.0])
    gaps = knot_gaps(knots)
    np.testing.assert_array_equal(gaps, [10.0, 2.0, 8.0, 10.0])
    wild = np.array([0.0, 30.0, -30.0, 30.0, 0.0])
    s = monotone_seed(wild, gaps, np.full(5, -50.0), np.full(5, 50.0))
    # neighbours at most CROSSING gaps apart, so rulings 2 mm apart stay nearly parallel
    assert np.all(np.abs(np.diff(s)) <= CROSSING * np.asarray(gaps) + 1e-12)


def test_a_ridge_along_the_wire_is_followed_by_a_knot() -> None:
    # a gable of two planes meeting along the wire: with a knot on the ridge the cut is the
    # gable itself; with the knots evenly spaced and the ridge midway between two of them,
    # the chord cuts the corner off by about (offset / 2) x (slope change) / 2
    from wirecut.geometry.frames import rigid
    from wirecut.ruled.fit import fit_cut
    from wirecut.ruled.sampling import sample_target

    slope = 0.5
    xs = np.linspace(0.0, 600.0, 61)
    ys = np.linspace(0.0, 400.0, 21)
    job = quick_job()
    target = height_target(xs, ys, lambda x, y: 300.0 - slope * np.abs(x - 300.0), job)
    along = frame(90.0)  # the wire along y, the sweep along x
    transform = rigid(along.rotation, np.array([0.0, 0.0, 0.0]))
    samples = sample_target(target, transform, spacing_mm=5.0)
    z = samples.points[:, 2]
    x = samples.points[:, 0]
    ridge_x = float(x[np.argmax(samples.points[:, 1])])  # machine x of the ridge
    lo, hi = float(x.min()), float(x.max())
    # knots every 10 mm from lo - 2: the ridge sits 5 mm from the nearest
    x_range = (ridge_x - 305.0 - 2.0 * 10.0, ridge_x + 305.0 + 2.0 * 10.0)
    assert x_range[0] < lo and x_range[1] > hi
    args = (samples, float(z.min()), float(z.max()), transform, job.tolerance)
    plain = fit_cut(*args, x_range=x_range, ruling_spacing_mm=10.0, correspondence=False)
    pinned = fit_cut(*args, x_range=x_range, ruling_spacing_mm=10.0, correspondence=False,
                     knots_at=np.array([ridge_x]))  # fmt: skip
    found = break_lines(target, np.array([1.0, 0.0]), 25.0)  # creases across x: the ridge
    assert np.allclose(found, [300.0])
    assert pinned.report.max_abs_mm < 1e-6
    assert plain.report.max_abs_mm > 0.5  # 5 mm off a 2 x 0.5 slope change: about 1.2 mm


def test_nearest_gap_is_the_distance_to_the_nearest_line() -> None:
    from wirecut.geometry.creases import nearest_gap

    rng = np.random.default_rng(3)
    lines = np.sort(rng.uniform(0.0, 1000.0, 17))
    t = rng.uniform(-100.0, 1100.0, 500)
    assert np.allclose(nearest_gap(t, lines), np.abs(t[:, None] - lines[None, :]).min(axis=1))


def test_a_coarse_dome_has_no_creases_but_a_fold_has_its_folds() -> None:
    # a sphere cap of R 700 mm meshed at 150 mm bends about 12 deg at every edge: a coarse
    # tessellation, no crease stands out from its neighbours (CREASE_CONTRAST)
    from wirecut.geometry.creases import sharp_edges

    r = 700.0
    xs = np.linspace(-450.0, 450.0, 7)
    dome = height_target(xs, xs, lambda x, y: np.sqrt(r * r - x * x - y * y))
    first, _, sharp = sharp_edges(dome)
    assert len(first) and not sharp.any()
    # the ridge of a roof at 8 deg: its edges, and only those
    ridge = roof(8.0)
    first, _, sharp = sharp_edges(ridge)
    ends = ridge.edge_table.edges[ridge.edge_table.counts == 2][sharp]
    assert sharp.any() and np.allclose(ridge.vertices[ends][:, :, 1], 300.0)


def test_the_analysis_measures_the_creases_and_the_map_draws_them(tmp_path) -> None:
    # the step's wall has a foot and a top, each the polyline of z = 20 sin(pi x / 600) over
    # the 25 grid points of x: twice its length, by construction
    from wirecut.export.maps import write_cuttability_map
    from wirecut.geometry.cuttability import analyse_surface

    job = quick_job()
    target = step_target(job)
    analysis = analyse_surface(target, job)
    xs = np.linspace(0.0, 600.0, 25)
    line = np.hypot(np.diff(xs), np.diff(20.0 * np.sin(np.pi * xs / 600.0))).sum()
    assert analysis.crease_length_mm == pytest.approx(2.0 * line, rel=1e-9)
    assert analysis.to_json()["developable_area_fraction"] == pytest.approx(1.0)
    out = write_cuttability_map(target, analysis, tmp_path / "map.png", job.tolerance)
    assert out.stat().st_size > 0
    smooth = analyse_surface(roof(2.0), job)  # a gentle ridge, no crease
    assert smooth.crease_length_mm == 0.0


def test_the_direction_score_puts_a_knot_on_a_ridge_along_the_wire() -> None:
    # a steep gable scored with the wire along its ridge: the quick fits follow the ridge
    # exactly with a knot on it, as the split's fits do
    from wirecut.ruled.direction import _coarse_samples, _score

    job = quick_job()
    xs = np.linspace(0.0, 600.0, 61)
    ys = np.linspace(0.0, 400.0, 21)
    target = height_target(xs, ys, lambda x, y: 300.0 - 0.8 * np.abs(x - 300.0), job)
    along = frame(90.0)
    samples = _coarse_samples(target, along)
    sweep = np.array([along.rotation[0][0], along.rotation[0][1]])  # machine x in plan
    ridges = break_lines(target, sweep, 25.0)
    assert len(ridges) == 1
    pinned = _score(samples, job, ridges=ridges)
    plain = _score(samples, job)
    assert pinned[1] < 1e-3
    assert pinned[1] <= plain[1] + 1e-12
    assert pinned[0] == pytest.approx(1.0)


@pytest.mark.parametrize("correspondence", [False, True])
def test_both_corners_of_a_narrow_wall_get_a_knot(correspondence) -> None:
    # a step whose wall along the wire rises 80 mm over 10 mm (a wall one grid cell wide):
    # its foot and top are creases 10 mm apart, between knots 28 mm apart, so the nearest
    # knot of both is the same one. Each corner needs a knot (a chord across the other cut
    # it off by 20 mm when only one had a knot), and the skews of the two close rulings stay within
    # their own gap, so the cut stays one that does not cross itself
    from wirecut.geometry.frames import rigid
    from wirecut.ruled.fit import fit_cut
    from wirecut.ruled.sampling import sample_target

    xs = np.concatenate([np.arange(0.0, 291.0, 10.0), np.arange(300.0, 601.0, 10.0)])
    ys = np.linspace(0.0, 400.0, 21)
    job = quick_job()
    target = height_target(xs, ys, lambda x, y: np.where(x <= 290.0, 200.0, 280.0), job)
    along = frame(90.0)
    transform = rigid(along.rotation, np.zeros(3))
    samples = sample_target(target, transform, spacing_mm=5.0)
    z, x = samples.points[:, 2], samples.points[:, 0]
    corners = np.sort(break_lines(target, np.array([1.0, 0.0]), 25.0))
    assert np.allclose(corners, [290.0, 300.0])  # foot and top of the wall (part x)
    at = np.sort(np.array([290.0, 300.0]) * along.rotation[0, 0])  # machine x of the corners
    x_range = (float(x.min()) - 5.0, float(x.max()) + 5.0)
    args = (samples, float(z.min()), float(z.max()), transform, job.tolerance)
    fit = fit_cut(*args, x_range=x_range, ruling_spacing_mm=28.0,
                  correspondence=correspondence, knots_at=at)  # fmt: skip
    mid = 0.5 * (fit.cut.left[:, 0] + fit.cut.right[:, 0])
    assert np.min(np.abs(mid[:, None] - at[None, :]), axis=0).max() < 1e-9
    assert fit.report.max_abs_mm < 0.05
    assert fit.cut.is_monotone()


def _oblique_fold(deg: float, job, rows: int = 21):
    # two planes meeting at a crease 5 deg off y (the wire), the mesh's edges along it (the
    # grid sheared: its lines u = const run along the crease), as a CAD export of facets is
    sin, cos = math.sin(math.radians(deg)), math.cos(math.radians(deg))
    us = np.linspace(0.0, 600.0, 61)
    vs = np.linspace(0.0, 400.0, rows)
    uu, vv = np.meshgrid(us, vs, indexing="ij")
    x = uu + sin / cos * (vv - 200.0)
    z = 300.0 - 0.5 * np.abs(uu - 300.0)
    verts = np.column_stack([x.ravel(), vv.ravel(), z.ravel()])
    idx = np.arange(len(us) * len(vs)).reshape(len(us), len(vs))
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    faces = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    target, _ = target_from_arrays(verts, faces, job)
    return target, sin / cos


def test_an_oblique_crease_is_one_straight_line_with_its_skew() -> None:
    from wirecut.geometry.creases import crease_lines
    from wirecut.geometry.frames import rigid

    job = quick_job()
    target, slope = _oblique_fold(5.0, job)
    along = frame(90.0)  # the wire along y
    transform = rigid(along.rotation, np.array([40.0, 0.0, 600.0]))
    z_l, z_r = 600.0 + 50.0, 600.0 + 350.0  # a strip y in [50, 350] (machine z = y + 600)
    x_mid, skew = crease_lines(target, transform, z_l, z_r)
    assert len(x_mid) == 1
    # the crease at y = 200 (the strip's middle) lies at part x = 300; machine x = R x + t
    expect = (along.rotation @ np.array([300.0, 200.0, 300.0]))[0] + 40.0
    assert x_mid[0] == pytest.approx(expect, abs=1e-6)
    # across the 300 mm strip it moves tan(5 deg) x 300 = 26.2 mm along the sweep (by hand);
    # machine x runs against part x here (x = y cross z), hence the sign
    assert abs(skew[0]) == pytest.approx(slope * 300.0, rel=1e-9)
    assert np.sign(skew[0]) == np.sign(along.rotation[0, 0])
    # a limit on the slope the towers can follow leaves it out
    assert len(crease_lines(target, transform, z_l, z_r, max_slope=0.5 * slope)[0]) == 0
    # long facets, as a CAD export writes them: a strip y in [120, 180] lies inside one
    # 200 mm crease edge (y 0-200, its midpoint outside the strip), which still gives the line
    long_facets, _ = _oblique_fold(5.0, job, rows=3)
    x_long, skew_long = crease_lines(long_facets, transform, 720.0, 780.0)
    mid_long = (along.rotation @ np.array([300.0 + slope * (150.0 - 200.0), 150.0, 300.0]))[0]
    assert x_long == pytest.approx([mid_long + 40.0], abs=1e-6)
    assert abs(skew_long[0]) == pytest.approx(slope * 60.0, rel=1e-9)


def test_a_fit_follows_an_oblique_crease_with_a_skewed_ruling() -> None:
    from wirecut.geometry.creases import crease_lines
    from wirecut.geometry.frames import rigid
    from wirecut.ruled.fit import fit_cut
    from wirecut.ruled.sampling import sample_target

    job = quick_job()
    target, _ = _oblique_fold(5.0, job)
    along = frame(90.0)
    transform = rigid(along.rotation, np.zeros(3))
    samples = sample_target(target, transform, spacing_mm=5.0)
    z, x = samples.points[:, 2], samples.points[:, 0]
    z_l, z_r = float(z.min()), float(z.max())
    lines = crease_lines(target, transform, z_l, z_r)
    args = (samples, z_l, z_r, transform, job.tolerance)
    x_range = (float(x.min()) - 40.0, float(x.max()) + 40.0)
    plain = fit_cut(*args, x_range=x_range, ruling_spacing_mm=20.0, correspondence=False)
    followed = fit_cut(*args, x_range=x_range, ruling_spacing_mm=20.0, correspondence=False,
                       crease_lines=lines)  # fmt: skip
    assert plain.report.max_abs_mm > 1.0  # a chord across the crease's 35 mm of travel
    assert followed.report.max_abs_mm < 1e-6 and followed.skewed
    assert followed.cut.is_monotone()
    # the ruling on the crease: its ends where the crease crosses the faces
    k = int(np.argmin(np.abs(0.5 * (followed.cut.left[:, 0] + followed.cut.right[:, 0])
                             - lines[0][0])))  # fmt: skip
    assert followed.cut.right[k, 0] - followed.cut.left[k, 0] == pytest.approx(lines[1][0])


def test_the_split_follows_an_oblique_fold_in_one_strip() -> None:
    # the 5 deg fold, 400 mm along the wire: one strip, its fit exactly on the crease
    # (without the crease's own skew the fit's skew search found it only roughly: 0.061 mm)
    job = quick_job()
    target, _ = _oblique_fold(5.0, job)
    result = split_pieces(target, None, [frame(90.0)], job)
    assert len(result.cuts_mm) == 2  # one strip
    assert all(p.fit.report.max_abs_mm < 1e-3 for p in result.pieces)
    assert all(p.fit.skewed for p in result.pieces)
