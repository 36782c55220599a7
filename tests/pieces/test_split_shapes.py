"""split_pieces on shapes whose piece count, volume and coverage are known by construction."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon
from shapes_pieces import height_target, quick_job

from wirecut.geometry.frames import DirectionFrame
from wirecut.pieces.region import footprint
from wirecut.pieces.split import split_pieces
from wirecut.pieces.stock import allocate

UP = np.array([0.0, 0.0, 1.0])


def frame(deg: float) -> DirectionFrame:
    return DirectionFrame.from_angle(math.radians(deg), UP, "below")


def region_of(piece) -> Polygon:
    holes = piece.extra.get("holes_plan", [])
    return Polygon(piece.region_plan, holes)


def assert_exact_cover(target, pieces) -> None:
    fp = footprint(target.vertices, target.faces, target.up)
    regions = [region_of(p) for p in pieces]
    union = shapely.union_all(regions)
    # the pieces cover the footprint: union area = footprint area within 0.1 % (brief)
    assert union.area == pytest.approx(fp.area, rel=1e-3)
    assert shapely.symmetric_difference(union, fp).area < 1e-3 * fp.area
    # no overlaps: the areas add up to the union's
    assert sum(r.area for r in regions) == pytest.approx(union.area, rel=1e-6)


# spherical cap: R = 3000 mm, tol = 0.5 mm; the best straight line over a chord w of a circle
# errs by half the sagitta, s / 2 with s = R - sqrt(R^2 - w^2 / 4) (standard circle geometry;
# Chebyshev equioscillation), so w = 2 sqrt(R^2 - (R - 2 tol)^2) = 2 sqrt(4 R tol - 4 tol^2)
R_CAP, TOL = 3000.0, 0.5
W_REACH = 2.0 * math.sqrt(R_CAP**2 - (R_CAP - 2.0 * TOL) ** 2)  # 154.9 mm
W_CAP, L_CAP = 500.0, 800.0  # W / w = 3.2: ceil = 4 even if the fit reaches only 80 % of w


@pytest.fixture(scope="module")
def cap():
    xs = np.linspace(0.0, L_CAP, 41)  # 20 mm grid: chord sag 20^2 / (8 R) = 0.017 mm
    ys = np.linspace(0.0, W_CAP, 26)

    def z(x, y):
        return np.sqrt(R_CAP**2 - (x - L_CAP / 2) ** 2 - (y - W_CAP / 2) ** 2) - R_CAP + 100.0

    # the sagitta check concerns the fit alone: a wire without lag leaves the whole tolerance
    # to the fit (with lag, tolerance.lag_share of it is kept for the program)
    job = quick_job()
    job = replace(job, wire=replace(job.wire, lag_ref_mm=0.0))
    target = height_target(xs, ys, z, job)
    # two candidates: wire across the short side (90 deg) and across the long side (0 deg)
    result = split_pieces(target, None, [frame(0.0), frame(90.0)], job)
    return target, job, result


def test_cap_piece_count_from_the_sagitta(cap) -> None:
    _, _, result = cap
    assert result.pieces
    # ceil(W / w) strips across the shorter side (sagitta formula above)
    assert len(result.pieces) == math.ceil(W_CAP / W_REACH) == 4
    rows = {round(r.angle_deg): r for r in result.directions}
    assert rows[90].chosen and not rows[0].chosen
    # the other direction needs ceil(L / w) = 6 (same formula)
    assert rows[0].strips == math.ceil(L_CAP / W_REACH)


def test_cap_pieces_within_tolerance_and_share_cut_lines(cap) -> None:
    _, job, result = cap
    for p in result.pieces:
        assert p.fit.report.max_abs_mm <= job.tolerance.surface_mm
        assert p.extra["feasible"]
        # blocks centred between the towers, on the bed (placement rule of the brief)
        assert np.mean(p.block.z_mm) == pytest.approx(job.machine.span_mm / 2)
        assert p.block.y_mm[0] == job.machine.bed_y_mm
    cuts = result.cuts_mm
    for k, p in enumerate(result.pieces):
        a, b = p.extra["strip_mm"]
        assert (a, b) == (cuts[k], cuts[k + 1])  # neighbours use the same plane coordinate
    assert result.infeasible_area_mm2 == 0.0


def test_cap_regions_cover_the_footprint(cap) -> None:
    target, _, result = cap
    assert_exact_cover(target, result.pieces)


def test_cap_common_base_plane(cap) -> None:
    target, job, result = cap
    # every block stands on the bed; the surface's lowest point is base_mm above it
    lowest = min(
        float(
            np.min(
                p.part_to_machine[:3, :3] @ target.vertices.T + p.part_to_machine[:3, 3:4], axis=1
            )[1]
        )
        for p in result.pieces
    )
    assert lowest == pytest.approx(job.machine.bed_y_mm + job.mold.base_mm)


# hyperbolic paraboloid z = x y / c: the lines x = const and y = const lie in it (doubly
# ruled, standard), so one block cuts it exactly
C_HYPAR = 2000.0
A_HYPAR, B_HYPAR = 450.0, 350.0  # half sizes: 900 x 700 fits the default machine and stock


@pytest.fixture(scope="module")
def hypar():
    xs = np.linspace(-A_HYPAR, A_HYPAR, 31)
    ys = np.linspace(-B_HYPAR, B_HYPAR, 25)
    job = quick_job()
    target = height_target(xs, ys, lambda x, y: x * y / C_HYPAR + 200.0, job)
    return target, job, split_pieces(target, None, frame(90.0), job)


def test_hypar_is_one_piece(hypar) -> None:
    _, job, result = hypar
    assert len(result.pieces) == 1
    assert result.pieces[0].fit.report.max_abs_mm <= job.tolerance.surface_mm


def test_hypar_kept_volume_is_the_integral_of_the_height_field(hypar) -> None:
    _, job, result = hypar
    a, b = A_HYPAR, B_HYPAR
    # integral over [-a, a] x [-b, b] of (x y / c + z0 - base), base = z0 - a b / c - base_mm:
    # the x y term integrates to 0, leaving 4 a b (a b / c + base_mm) (by hand)
    exact = 4 * a * b * (a * b / C_HYPAR + job.mold.base_mm)
    kept = sum(p.extra["kept_volume_mm3"] for p in result.pieces)
    assert kept == pytest.approx(exact, rel=5e-3)
    alloc = allocate(result.pieces, job)
    assert alloc.kept_volume_m3 == pytest.approx(exact * 1e-9, rel=5e-3)
    assert alloc.foam_volume_m3 >= alloc.kept_volume_m3


# cylinder of radius R with its axis along y, wire along the axis: every wire line lies in
# the surface (developable, standard), so only the machine's span and travel split it
R_CYL = 5000.0


def cylinder(width: float, length: float, job):
    xs = np.linspace(-length / 2, length / 2, int(length / 100) + 1)
    ys = np.linspace(0.0, width, int(width / 200) + 1)
    return height_target(xs, ys, lambda x, y: np.sqrt(R_CYL**2 - x**2) - R_CYL + 300.0, job)


def test_cylinder_that_fits_one_block_is_one_piece() -> None:
    job = quick_job()
    target = cylinder(1000.0, 900.0, job)
    result = split_pieces(target, None, frame(90.0), job)
    assert len(result.pieces) == 1


def test_cylinder_split_only_where_span_and_travel_force_it() -> None:
    job = quick_job()
    width, length = 2000.0, 2500.0
    target = cylinder(width, length, job)
    result = split_pieces(target, None, frame(90.0), job)
    usable = job.usable_width_mm  # 1600 - 2 * 100 = 1400 mm along the wire
    room = job.machine.travel_x_mm[1] - job.machine.travel_x_mm[0]
    room -= 2 * job.machine.home_clearance_mm + 2 * job.pieces.sweep_margin_mm
    # ceil(2000 / 1400) strips x ceil(2500 / 1100) equal parts along the sweep (arithmetic)
    assert len(result.pieces) == math.ceil(width / usable) * math.ceil(length / room) == 6
    for p in result.pieces:
        assert p.block.size_mm[1] <= usable + 1e-9
        # blank length plus margins within the travel minus both home clearances
        assert p.block.size_mm[0] <= room + 2 * job.pieces.sweep_margin_mm + 1e-6
        lo, hi = job.machine.travel_x_mm
        assert lo <= p.block.x_mm[0] < p.block.x_mm[1] <= hi
    assert_exact_cover(target, result.pieces)
    # volume under the cylinder down to the base plane, by hand:
    # int_{-l/2}^{l/2} sqrt(R^2 - x^2) dx = x/2 sqrt(R^2 - x^2) + R^2/2 asin(x / R) | (standard)
    h = length / 2
    arc = h * math.sqrt(R_CYL**2 - h**2) + R_CYL**2 * math.asin(h / R_CYL)
    low = math.sqrt(R_CYL**2 - h**2) - R_CYL + 300.0
    base = low - job.mold.base_mm
    exact = width * (arc + length * (300.0 - R_CYL - base))
    kept = sum(p.extra["kept_volume_mm3"] for p in result.pieces)
    assert kept == pytest.approx(exact, rel=5e-3)


def test_a_skewed_cut_the_towers_cannot_drive_is_cut_on_shorter_blanks():
    # a parabolic trough z = (x - c (y - 300))^2 / 2R whose generators lean c = 0.2 off the
    # wire (plan y): the exact cut has rulings skewed 0.2 of the blank's width, which the
    # towers, 1600 mm apart, see as 320 mm between X and U. One blank 1050 mm long then needs
    # 1050 + 320 mm plus the lead room of the 1200 mm travel; parallel rulings leave half the
    # sagitta of the section along the wire, c^2 / R * w^2 / 8 / 2 = 0.9 mm over w = 600 mm
    # (the best line over a parabola's chord errs by half its sag: Chebyshev equioscillation).
    # With the program stage's judgement given, the piece is cut on two blanks, each driven
    # within the tolerance
    from wirecut.config import JobProfile
    from wirecut.pieces.split import Judge, tower_overrun_mm
    from wirecut.plan import _drivable, _judged

    job = JobProfile()
    c, r, w = 0.2, 1000.0, 600.0
    xs, ys = np.linspace(-525, 525, 106), np.linspace(0, w, 31)
    target = height_target(xs, ys, lambda x, y: (x - c * (y - w / 2)) ** 2 / (2 * r) + 100, job)
    alone = split_pieces(target, None, frame(90.0), job)
    assert len(alone.pieces) == 1
    (piece,) = alone.pieces
    assert piece.fit.skewed and piece.fit.report.max_abs_mm < 0.35
    assert tower_overrun_mm(piece.fit, piece.block, job) > 0.0
    assert _judged(target, piece, job) is None  # no program
    assert not _drivable(piece, job)

    judge = Judge(lambda p: _drivable(p, job), lambda p: _judged(target, p, job))
    result = split_pieces(target, None, frame(90.0), job, judge=judge)
    assert len(result.pieces) == 2
    for p in result.pieces:
        assert p.fit.report.max_abs_mm < 0.35
        replayed = _judged(target, p, job)  # the program's own replay
        assert replayed is not None and replayed < job.tolerance.surface_mm
    assert_exact_cover(target, result.pieces)
    (note,) = [f for f in result.findings if f.code == "shorter-for-skew"]
    assert note.piece == "P01" and "P01 and P02" in note.message
    flat = float(note.message.split("there leaves ")[1].split(" mm")[0])
    assert flat == pytest.approx(c**2 / r * w**2 / 8 / 2, rel=0.05)
