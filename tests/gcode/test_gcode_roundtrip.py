"""write_gcode -> read_gcode round trips, both dialects and both feed rules, and the
writer's guarantees (F on every G1, line length, travel refusal, zero-length moves)."""

import re

import numpy as np
import pytest
from gcode_programs import job_for, programs, random_program, rectangle_program, tapered_program
from hypothesis import given, settings

from wirecut.config import Dialect, FeedRule
from wirecut.errors import JobError, TravelError
from wirecut.gcode.reader import read_gcode
from wirecut.gcode.writer import normalize_program, write_gcode
from wirecut.toolpath.program import CutProgram, Op

JOBS = {
    "inverse-time": job_for(Dialect.XYUV_INVERSE_TIME),
    "upm-first-tower": job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.FIRST_TOWER),
    "upm-all-axes": job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.ALL_AXES),
    "upm-xyuv-letters": job_for(
        Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.ALL_AXES, ("X", "Y", "U", "V")
    ),
}

POS_TOL_MM = 0.001  # brief: positions within 0.001 mm
REL_TIME_TOL = 1e-3  # brief: durations within 0.1 %


def assert_round_trip(program: CutProgram, job) -> CutProgram:
    text = write_gcode(program, job)
    back = read_gcode(text, job)
    ref = normalize_program(program, job)
    np.testing.assert_array_equal(back.ops, ref.ops)
    np.testing.assert_allclose(back.start, program.start, atol=POS_TOL_MM)
    np.testing.assert_allclose(back.towers, ref.towers, atol=POS_TOL_MM)
    timed = (ref.ops == Op.FEED) | (ref.ops == Op.DWELL)
    np.testing.assert_allclose(back.duration_s[timed], ref.duration_s[timed], rtol=REL_TIME_TOL)
    return back


@pytest.mark.parametrize("name", sorted(JOBS))
@pytest.mark.parametrize("make", [rectangle_program, tapered_program])
def test_hand_made_programs_round_trip_exactly_as_planned(name, make):
    program = make()
    back = assert_round_trip(program, JOBS[name])
    # these programs are already writable: the reader gives back the program itself
    np.testing.assert_array_equal(back.ops, program.ops)
    np.testing.assert_allclose(back.towers, program.towers, atol=POS_TOL_MM)
    np.testing.assert_allclose(back.duration_s, program.duration_s, rtol=REL_TIME_TOL)
    assert back.heat_power == program.heat_power


def test_rectangle_time_is_perimeter_over_speed():
    # a 400 x 250 rectangle at 4 mm/s: 2 (400 + 250) / 4 = 325 s, plus the 3 s dwell
    # (perimeter of a rectangle, by construction)
    back = read_gcode(write_gcode(rectangle_program(), JOBS["inverse-time"]), JOBS["inverse-time"])
    assert back.machine_time_s == pytest.approx(328.0, rel=1e-5)


@pytest.mark.parametrize(
    ("rule", "expected_f"),
    [
        # first-tower: the left tower's diagonal of the 200 mm square, sqrt(2) * 200 mm, in
        # 25 s: F = 200 sqrt(2) / (25 / 60) mm/min (Pythagoras)
        (FeedRule.FIRST_TOWER, 200.0 * np.sqrt(2.0) / (25.0 / 60.0)),
        # all-axes: one side, left 200 mm and right 100 mm: sqrt(200^2 + 100^2) mm in 25 s
        (FeedRule.ALL_AXES, np.hypot(200.0, 100.0) / (25.0 / 60.0)),
    ],
)
def test_units_per_minute_f_follows_the_feed_rule(rule, expected_f):
    job = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, rule)
    program = tapered_program()
    if rule is FeedRule.FIRST_TOWER:  # a diagonal move: replace the first side
        towers = program.towers.copy()
        towers[2] = [600.0, 400.0, 550.0, 350.0]  # left (400,200)->(600,400): diagonal 200 mm
        program = CutProgram("P", program.ops, towers, program.duration_s, program.start, 60.0, ())
    f_words = [float(m) for m in re.findall(r"^G1 .* F([0-9.]+)$", write_gcode(program, job), re.M)]
    assert f_words[0] == pytest.approx(expected_f, rel=1e-5)


def test_first_tower_rule_falls_back_to_second_tower():
    # only the right tower moves 30 mm in 6 s: F = 30 / 0.1 min = 300 mm/min
    job = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.FIRST_TOWER)
    program = CutProgram(
        "P",
        np.array([Op.FEED]),
        np.array([[10.0, 10.0, 40.0, 10.0]]),
        np.array([6.0]),
        np.array([10.0, 10.0, 10.0, 10.0]),
        60.0,
    )
    text = write_gcode(program, job)
    assert re.search(r"^G1 X10.000 Y10.000 Z40.000 A10.000 F300$", text, re.M)
    assert read_gcode(text, job).duration_s[-2] == pytest.approx(6.0, rel=1e-6)


@pytest.mark.parametrize("name", sorted(JOBS))
def test_random_walks_round_trip(name):
    rng = np.random.default_rng(7)
    for n in (1, 50, 400):
        assert_round_trip(random_program(rng, n, JOBS[name]), JOBS[name])


@settings(max_examples=60, deadline=None)
@given(programs())
def test_any_program_round_trips_in_inverse_time(program):
    back = assert_round_trip(program, JOBS["inverse-time"])
    ref = normalize_program(program, JOBS["inverse-time"])
    # normalising keeps the planned feed + dwell time wherever a duration was given
    timed = (program.ops == Op.DWELL) | (program.ops == Op.FEED)
    given_time = float(program.duration_s[timed].sum())
    added = ref.machine_time_s - given_time
    assert added >= -1e-9 * max(1.0, given_time)
    assert back.machine_time_s == pytest.approx(ref.machine_time_s, rel=1e-5, abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(programs())
def test_any_program_round_trips_in_units_per_minute(program):
    for name in ("upm-first-tower", "upm-all-axes"):
        assert_round_trip(program, JOBS[name])


@settings(max_examples=40, deadline=None)
@given(programs())
def test_every_g1_has_a_positive_f_in_inverse_time(program):
    text = write_gcode(program, JOBS["inverse-time"])
    for line in text.splitlines():
        if line.startswith("G1 "):
            m = re.search(r" F([0-9.]+)$", line)
            assert m and float(m.group(1)) > 0.0  # G93 needs F on every G1 (RS274/NGC G93)
        assert "inf" not in line.lower() and "nan" not in line.lower()
        assert "e" not in line.split("(")[0].lower()  # no exponent: not a G-code number form


@settings(max_examples=40, deadline=None)
@given(programs())
def test_four_axis_lines_are_at_most_80_characters(program):
    text = write_gcode(program, JOBS["upm-first-tower"])
    assert max(len(line) for line in text.splitlines()) <= 80  # brief: dialect limit


def test_heat_on_before_first_cut_and_off_at_end():
    program = rectangle_program()
    keep = (program.ops != Op.HEAT_ON) & (program.ops != Op.HEAT_OFF)
    cold = CutProgram(
        "P", program.ops[keep], program.towers[keep], program.duration_s[keep], program.start
    )
    lines = write_gcode(cold, JOBS["inverse-time"]).splitlines()
    first_g1 = next(i for i, s in enumerate(lines) if s.startswith("G1"))
    last_g1 = max(i for i, s in enumerate(lines) if s.startswith("G1"))
    m3 = [i for i, s in enumerate(lines) if s.startswith("M3 S")]
    m5 = [i for i, s in enumerate(lines) if s == "M5"]
    assert m3 == [first_g1 - 1]  # inserted right before the first cut (after the dwell)
    assert lines[m3[0]] == "M3 S60"  # job.machine.heat_power of the default profile
    assert len(m5) == 1 and m5[0] > last_g1
    assert lines[-1] == "M2"
    assert lines[:3] != ["G21 G90 G17", "G61", "G93"]  # header comments come first
    i = lines.index("G21 G90 G17")
    assert lines[i : i + 3] == ["G21 G90 G17", "G61", "G93"]


def test_zero_length_and_zero_duration_feeds():
    start = np.array([100.0, 100.0, 100.0, 100.0])
    towers = np.array(
        [
            [100.0002, 100.0, 100.0, 100.0],  # rounds to no motion, 2 s: becomes a dwell
            [100.0, 100.0, 100.0, 100.0],  # no motion, no time: dropped
            [150.0, 100.0, 125.0, 100.0],  # moves 50 mm in 0 s: timed at the top axis speed
        ]
    )
    program = CutProgram("Z", np.array([Op.FEED] * 3), towers, np.array([2.0, 0.0, 0.0]), start)
    job = JOBS["inverse-time"]
    ref = normalize_program(program, job)
    assert ref.ops.tolist() == [Op.DWELL, Op.HEAT_ON, Op.FEED, Op.HEAT_OFF]
    # 50 mm at machine.max_axis_speed_mm_s = 25 mm/s: 2 s (default profile)
    assert ref.duration_s[2] == pytest.approx(2.0)
    text = write_gcode(program, job)
    assert "G4 P2\n" in text and "F30\n" in text  # 2 s = 1/30 min


@pytest.mark.parametrize(
    ("axis", "value", "overshoot"),
    [(0, -5.0, 5.0), (1, 812.5, 12.5), (2, 1200.5, 0.5), (3, -0.25, 0.25)],
)
def test_positions_outside_travel_are_refused(axis, value, overshoot):
    # default travel: x in [0, 1200], y in [0, 800] (default profile)
    program = rectangle_program()
    towers = program.towers.copy()
    towers[4, axis] = value
    bad = CutProgram("P07", program.ops, towers, program.duration_s, program.start, 60.0)
    with pytest.raises(TravelError) as info:
        write_gcode(bad, JOBS["inverse-time"])
    message = str(info.value)
    assert "P07" in message and f"{overshoot:.3f} mm outside" in message
    assert "XYUV"[axis] in message


def test_start_outside_travel_is_refused():
    program = rectangle_program()
    bad = CutProgram(
        "P08", program.ops, program.towers, program.duration_s, np.array([0, 0, -1.0, 0]), 1.0
    )
    with pytest.raises(TravelError, match="start position"):
        write_gcode(bad, JOBS["upm-all-axes"])


def test_non_finite_positions_are_refused():
    program = rectangle_program()
    towers = program.towers.copy()
    towers[3, 1] = np.nan
    bad = CutProgram("P09", program.ops, towers, program.duration_s, program.start)
    with pytest.raises(JobError, match="P09"):
        write_gcode(bad, JOBS["inverse-time"])


def test_hostile_header_text_stays_in_comments():
    program = rectangle_program()
    hostile = (("stock", "x) G0 X-999 ("), ("block\n", "M3 S999\nG1 X-5 F1"), ("n;", "%"))
    bad = CutProgram(
        "P01", program.ops, program.towers, program.duration_s, program.start, 60.0, hostile
    )
    job = JOBS["inverse-time"]
    text = write_gcode(bad, job)
    assert "X-999" not in text.split("G21")[1]  # nothing after the header but our own code
    for line in text.splitlines():
        if line.startswith("("):
            assert line.endswith(")") and line.count("(") == 1 and line.count(")") == 1
        assert ";" not in line and "%" not in line
    # and the program read back is the same as without the hostile header
    np.testing.assert_allclose(
        read_gcode(text, job).towers, read_gcode(write_gcode(program, job), job).towers
    )


def test_output_is_deterministic_and_names_the_header():
    job = JOBS["inverse-time"]
    a = write_gcode(rectangle_program(), job)
    assert a == write_gcode(rectangle_program(), job)
    assert "(stock: long)" in a and "(block: 500 x 800 x 300 mm)" in a
    assert "(kerf left face: 1.200 mm)" in a and "(span: 1600.000 mm)" in a
    assert "styrene" in a and "unattended" in a and "high current" in a
    assert a.startswith("(piece: P01)\n")
    assert read_gcode(a, job).piece_id == "P01"  # the reader takes the id from the header
