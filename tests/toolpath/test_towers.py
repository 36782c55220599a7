"""Tower positions by similar triangles, and the travel limits (re-place or refuse)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from toolpath_shapes import make_piece, mesa

from wirecut.config import default_job
from wirecut.findings import Severity
from wirecut.toolpath.build import build_program
from wirecut.toolpath.program import Op
from wirecut.toolpath.towers import face_points, tower_positions, travel_check

JOB = default_job()
NO_KERF_NO_LAG = dataclasses.replace(
    JOB,
    wire=dataclasses.replace(
        JOB.wire, kerf_base_mm=0.0, kerf_speed_coeff_mm2_s=0.0, lag_ref_mm=0.0
    ),
)
SPAN = JOB.machine.span_mm  # 1600 mm

# tapered prism: the top outline of a 600 x 200 rectangle at the left face (z = 300) lofted to
# a 400 x 150 one at the right face (z = 1300)
LEFT = np.array([[200.0, 50.0], [200.0, 250.0], [800.0, 250.0], [800.0, 50.0]])
RIGHT = np.array([[300.0, 50.0], [300.0, 200.0], [700.0, 200.0], [700.0, 50.0]])

# similar triangles: a point at plane z on the line through (xL, zL) and (xR, zR) is
# xL + (xR - xL) (z - zL) / (zR - zL); here (0 - 300) / 1000 = -0.3 and (1600 - 300) / 1000 = 1.3
HAND_TOWERS = [
    # (X, Y, U, V) by hand (standard similar triangles)
    (200 - 0.3 * 100, 50.0, 200 + 1.3 * 100, 50.0),  # (170, 50, 330, 50)
    (200 - 0.3 * 100, 250 + 0.3 * 50, 200 + 1.3 * 100, 250 - 1.3 * 50),  # (170, 265, 330, 185)
    (800 + 0.3 * 100, 250 + 0.3 * 50, 800 - 1.3 * 100, 250 - 1.3 * 50),  # (830, 265, 670, 185)
    (800 + 0.3 * 100, 50.0, 800 - 1.3 * 100, 50.0),  # (830, 50, 670, 50)
]


def test_tower_positions_match_similar_triangles():
    got = tower_positions(LEFT, RIGHT, 300.0, 1300.0, SPAN)
    np.testing.assert_allclose(got, np.array(HAND_TOWERS), atol=1e-9)
    # and back: the line through the towers crosses the faces at the profiles
    np.testing.assert_allclose(face_points(got, 300.0, SPAN), LEFT, atol=1e-9)
    np.testing.assert_allclose(face_points(got, 1300.0, SPAN), RIGHT, atol=1e-9)


def test_program_of_tapered_prism_passes_through_hand_towers():
    piece = make_piece(LEFT, RIGHT, (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0))
    program, report, findings = build_program(piece, NO_KERF_NO_LAG)
    assert program is not None and findings == []
    feeds = program.towers[program.ops == Op.FEED]
    for row in HAND_TOWERS:  # each corner ruling is a programmed position (similar triangles)
        assert np.min(np.abs(feeds - np.array(row)).max(axis=1)) < 1e-9
    # without kerf the wire's face crossings are the profiles themselves
    np.testing.assert_allclose(report.left_offset, report.left_profile, atol=1e-12)


def test_shift_into_travel_is_reported():
    prof = mesa(10.0, 400.0, 80.0, 60.0, 100.0)
    piece = make_piece(prof, prof, (10.0, 400.0), (0.0, 200.0), (300.0, 1300.0))
    program, report, findings = build_program(piece, JOB)
    assert program is not None
    # approach at x = 10 - home_clearance (30) = -20: travel starts at 0, so shift +20 mm
    assert report.shift_x_mm == pytest.approx(20.0)  # 0 - (10 - 30) (by hand)
    assert [f.code for f in findings] == ["re-placed-in-travel"]
    assert findings[0].severity is Severity.INFO
    t = program.positions()
    assert t[:, [0, 2]].min() >= JOB.machine.travel_x_mm[0] - 1e-9
    assert np.isclose(t[:, [0, 2]].min(), 0.0)


@pytest.mark.parametrize(
    ("x_mm", "top", "axis", "over"),
    [
        # top 798: the wire parks at least 5 mm above the blank (the clearance lowered to
        # what the travel leaves, but not below that): 803 > travel 800, 3 mm over on Y
        ((200.0, 800.0), 798.0, "Y", 3.0),
        # a block as wide as the travel cannot take the approach and the overshoot
        ((0.0, 1200.0), 300.0, "X", None),
    ],
)
def test_outside_travel_refused(x_mm, top, axis, over):
    prof = mesa(x_mm[0], x_mm[1], 80.0, 60.0, 100.0)
    piece = make_piece(prof, prof, x_mm, (0.0, top), (300.0, 1300.0))
    program, _report, findings = build_program(piece, JOB)
    assert program is None
    f = [f for f in findings if f.code == "outside-travel"]
    assert len(f) == 1 and f[0].severity is Severity.ATTENTION and f[0].piece == "P01"
    assert f"axis {axis}" in f[0].message
    if over is not None:
        assert f"{over:.1f} mm" in f[0].message


def test_the_park_height_is_lowered_to_the_travel_top():
    """Top 790 + home clearance 30 = 820 is above the y travel (800): the wire starts and ends
    beside the blank at 800 instead, 10 mm above it, and the program stays in travel."""
    prof = mesa(200.0, 800.0, 80.0, 60.0, 100.0)
    piece = make_piece(prof, prof, (200.0, 800.0), (0.0, 790.0), (300.0, 1300.0))
    program, _report, findings = build_program(piece, JOB)
    assert program is not None
    assert not [f for f in findings if f.code == "outside-travel"]
    t = program.positions()
    assert t[:, [1, 3]].max() == pytest.approx(JOB.machine.travel_y_mm[1])
    # below 790 + 30 the wire is beside the blank (x outside it by the clearance) or cutting
    high = t[:, 1] > 790.0 + 1e-6
    assert np.all((t[high, 0] < 200.0) | (t[high, 0] > 800.0))
    # a blank that leaves room for the whole clearance keeps it (730 + 30 = 760)
    lower = make_piece(prof, prof, (200.0, 800.0), (0.0, 730.0), (300.0, 1300.0))
    assert build_program(lower, JOB)[0].positions()[:, 1].max() == pytest.approx(760.0)


def test_travel_check_unit():
    m = JOB.machine
    ok = travel_check(np.array([[10.0, 10.0, 20.0, 20.0]]), m)
    assert ok.ok and ok.shift_x_mm == 0.0
    right = travel_check(np.array([[1190.0, 10.0, 1210.0, 20.0]]), m)
    assert right.fixable and right.shift_x_mm == pytest.approx(-10.0)  # 1200 - 1210 (by hand)
    assert right.axis == "U" and right.overshoot_mm == pytest.approx(10.0)


# ------------------------------------------------------------------ the bed, and risers

RAISED = dataclasses.replace(
    NO_KERF_NO_LAG, machine=dataclasses.replace(NO_KERF_NO_LAG.machine, bed_y_mm=200.0)
)


def test_travel_check_wire_below_a_raised_bed():
    m = RAISED.machine  # bed 200, travel y 0-800
    # towers at Y = V = 150: the wire is at 150 at every plane, 50 mm below the bed (by hand)
    low = np.array([[100.0, 150.0, 100.0, 150.0], [100.0, 400.0, 100.0, 400.0]])
    assert travel_check(low, m).ok  # without the blank's faces only the travel is checked
    no = travel_check(low, m, (300.0, 1300.0))
    assert not no.ok and not no.fixable and no.axis == ""
    assert no.below_bed_mm == pytest.approx(50.0)
    lifted = travel_check(low, m, (300.0, 1300.0), riser=True)
    # 50 below + a 5 mm gap = 55, a whole 5 mm step already (by hand)
    assert lifted.fixable and lifted.riser_mm == pytest.approx(55.0) and lifted.shift_x_mm == 0.0


def test_travel_check_riser_for_towers_below_the_travel():
    m = JOB.machine  # bed 0 = bottom of the travel
    t = np.array([[100.0, 300.0, 100.0, -12.3], [100.0, 700.0, 100.0, 600.0]])
    assert not travel_check(t, m).fixable
    r = travel_check(t, m, riser=True)
    # 12.3 below + 5 = 17.3, up to the next whole 5 mm: 20 (by hand); then 700 + 20 <= 800
    assert r.fixable and r.riser_mm == pytest.approx(20.0) and r.axis == "V"
    # lifted by 20 the top tower would stand at 790 + 20 > 800: no riser helps
    too_tall = t + np.array([0.0, 90.0, 0.0, 0.0])
    assert not travel_check(too_tall, m, riser=True).fixable
    # a riser and a shift along the sweep together
    both = travel_check(t - np.array([120.0, 0.0, 120.0, 0.0]), m, riser=True)
    assert both.fixable and both.shift_x_mm == pytest.approx(20.0) and both.riser_mm == 20.0


def _tilted_piece(right_y: float, block_y=(0.0, 300.0), left_y: float = 250.0):
    # the wire falls from left_y at the left face (z 300) to right_y at the right (z 1300)
    left = np.array([[200.0, left_y], [800.0, left_y]])
    right = np.array([[200.0, right_y], [800.0, right_y]])
    return make_piece(left, right, (200.0, 800.0), block_y, (300.0, 1300.0))


def test_steep_wire_gets_a_riser_only_when_allowed():
    piece = _tilted_piece(20.0)
    # right tower plane: 20 + (20 - 250) * 300 / 1000 = -49 mm (similar triangles, by hand)
    program, _, findings = build_program(piece, NO_KERF_NO_LAG)
    assert program is None and [f.code for f in findings] == ["outside-travel"]
    program, report, findings = build_program(piece, NO_KERF_NO_LAG, riser=True)
    assert program is not None
    assert report.riser_mm == pytest.approx(55.0)  # 49 + 5 = 54, up to 55 (by hand)
    assert [f.code for f in findings] == ["on-riser"]
    assert findings[0].severity is Severity.INFO and "55 mm" in findings[0].message
    assert "foam" in findings[0].message
    t = program.positions()
    assert t[:, [1, 3]].min() == pytest.approx(-49.0 + 55.0)
    assert ("riser under the blank mm", "55 (foam only: the wire cuts into it)") in program.header
    np.testing.assert_allclose(report.left_profile[:, 1], 250.0 + 55.0)


def test_wire_below_a_raised_bed_is_refused_or_lifted():
    # bed 200: the cut runs from 300 at the left face to 150 at the right, 50 mm below the
    # bed there, while the towers stay inside the travel (150 - 0.15 * 300 = 105 >= 0)
    piece = _tilted_piece(150.0, (200.0, 500.0), left_y=300.0)
    program, _, findings = build_program(piece, RAISED)
    assert program is None
    bed = [f for f in findings if f.code == "below-bed"]
    assert len(bed) == 1 and "50.0 mm below the bed" in bed[0].message
    program, report, _ = build_program(piece, RAISED, riser=True)
    assert program is not None and report.riser_mm == pytest.approx(55.0)
    low = min(face_points(program.positions(), z, SPAN)[:, 1].min() for z in (300.0, 1300.0))
    assert low >= RAISED.machine.bed_y_mm + 5.0 - 1e-9


def test_a_riser_that_would_lift_the_towers_over_the_top_is_named():
    # the raised bed again, the wire from 600 at the left face to 150 at the right (50 mm
    # below the bed), in a blank 760 high: the approach over its top stands at 760 + 30 = 790,
    # inside the 800 travel, but the 55 mm riser would lift it to 845 (by hand)
    piece = _tilted_piece(150.0, (200.0, 760.0), left_y=600.0)
    program, report, findings = build_program(piece, RAISED, riser=True)
    assert program is None and report.riser_mm == 0.0
    bed = [f for f in findings if f.code == "below-bed"]
    assert len(bed) == 1 and "a riser high enough (55 mm)" in bed[0].message
