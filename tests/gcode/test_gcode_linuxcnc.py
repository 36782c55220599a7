"""The written G-code read by an independent interpreter: Debian's linuxcnc-uspace RS274/NGC.

The interpreter is fetched by .ci/linuxcnc.sh into <repo>/.cache/linuxcnc (or the folder in
WIRECUT_LINUXCNC_CACHE) and run through tests/gcode/linuxcnc_driver.py under Debian's own
/usr/bin/python3. These tests skip, with the reason printed, only where it cannot be had.
"""

import dataclasses

import numpy as np
import pytest
from gcode_programs import job_for, programs, random_program, rectangle_program, tapered_program
from hypothesis import given, settings

from wirecut.config import Dialect, FeedRule
from wirecut.gcode.reader import read_gcode
from wirecut.gcode.writer import normalize_program, write_gcode
from wirecut.toolpath.program import CutProgram, Op

POS_TOL_MM = 0.001  # brief: every reported position within 0.001 mm of the writer's
XYUV_COLUMNS = [0, 1, 6, 7]  # interpreter order X Y Z A B C U V W (canon straight_feed)


def _expected_moves(program: CutProgram, job) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Kinds, positions (k, 4) mm and durations (k,) s of the motion lines as written."""
    prog = normalize_program(program, job)
    motion = (prog.ops == Op.RAPID) | (prog.ops == Op.FEED)
    kinds = ["traverse"] + ["traverse" if o == Op.RAPID else "feed" for o in prog.ops[motion]]
    towers = np.vstack([prog.start[None, :], prog.towers[motion]])
    seconds = np.concatenate([[0.0], prog.duration_s[motion]])
    return kinds, towers, seconds


def _check_parse(result: dict) -> None:
    # result 1 = INTERP_EXIT (program ended by M2); errors are > MIN_ERROR
    # (linuxcnc interp_return.hh, as used by rs274/glcanon.py load_preview)
    assert result["result"] <= result["min_error"], (result["error"], result["error_line"])
    assert result["result"] == 1
    assert result["unexpected"] == []


PROGRAMS = {
    "rectangle": rectangle_program,
    "tapered": tapered_program,
    "random-300": lambda: random_program(np.random.default_rng(3), 300, job_for()),
    "random-40": lambda: random_program(np.random.default_rng(11), 40, job_for()),
}


@pytest.mark.parametrize("name", sorted(PROGRAMS))
def test_inverse_time_output_parses_and_positions_agree(name, interpreter, tmp_path):
    job = job_for(Dialect.XYUV_INVERSE_TIME)
    program = PROGRAMS[name]()
    result = interpreter(write_gcode(program, job), tmp_path)
    _check_parse(result)
    kinds, towers, seconds = _expected_moves(program, job)
    assert [m["kind"] for m in result["moves"]] == kinds
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], towers, atol=POS_TOL_MM)
    assert np.all(got[:, [2, 3, 4, 5, 8]] == 0.0)  # no other axis is ever commanded
    # durations from the interpreter's own feed rate: in G93 it turns F into a rate over the
    # XYZ length of the move, or the UVW length where XYZ does not move (the rate times the
    # move time gives back that length: linuxcnc's inverse-time conversion, observed here)
    prev = towers[:-1]
    feeds = np.array([k == "feed" for k in kinds])[1:]
    step = (towers[1:] - prev)[feeds]
    length = np.where(
        np.hypot(step[:, 0], step[:, 1]) > 0,
        np.hypot(step[:, 0], step[:, 1]),
        np.hypot(step[:, 2], step[:, 3]),
    )
    rate_mm_min = np.array([m["feed_rate"] for m in result["moves"][1:]])[feeds] * 25.4
    np.testing.assert_allclose(60.0 * length / rate_mm_min, seconds[1:][feeds], rtol=1e-3)
    prog = normalize_program(program, job)
    dwell = prog.duration_s[prog.ops == Op.DWELL]
    np.testing.assert_allclose([d["seconds"] for d in result["dwells"]], dwell, rtol=1e-5)
    assert "interpreter: feed mode set to inverse time" in result["comments"]


def test_hostile_header_cannot_inject_moves(interpreter, tmp_path):
    job = job_for(Dialect.XYUV_INVERSE_TIME)
    program = rectangle_program()
    hostile = dataclasses.replace(
        program, header=(("stock", "x) G0 X-999 ("), ("note", "MSG, run now\nG0 X-5"))
    )
    result = interpreter(write_gcode(hostile, job), tmp_path)
    _check_parse(result)
    kinds, towers, _ = _expected_moves(program, job)
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], towers, atol=POS_TOL_MM)
    assert not any(c.startswith("MSG") for c in result["comments"])


@pytest.mark.parametrize("rule", [FeedRule.FIRST_TOWER, FeedRule.ALL_AXES])
def test_units_per_minute_with_xyuv_letters(rule, interpreter, tmp_path):
    # With the letters X Y U V the interpreter reads the four-axis dialect as written; its
    # G94 rate is F itself (mm/min, reported in in/min).
    job = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, rule, ("X", "Y", "U", "V"))
    program = tapered_program()
    text = write_gcode(program, job)
    result = interpreter(text, tmp_path)
    _check_parse(result)
    kinds, towers, _ = _expected_moves(program, job)
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    assert [m["kind"] for m in result["moves"]] == kinds
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], towers, atol=POS_TOL_MM)
    written_f = [float(s.rsplit("F", 1)[1]) for s in text.splitlines() if s.startswith("G1 ")]
    rates = [m["feed_rate"] * 25.4 for m in result["moves"] if m["kind"] == "feed"]
    np.testing.assert_allclose(rates, written_f, rtol=1e-9)


def test_units_per_minute_with_z_a_letters_parses(interpreter, tmp_path):
    # The default letters X Y Z A: the interpreter reads Z as a linear axis (mm) and A as a
    # rotary one (degrees, not converted): the numbers agree, the meaning (second tower) is
    # the controller's configuration, which this interpreter cannot know.
    job = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.FIRST_TOWER)
    program = rectangle_program()
    result = interpreter(write_gcode(program, job), tmp_path, axes="XYZA")
    _check_parse(result)
    _, towers, _ = _expected_moves(program, job)
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    np.testing.assert_allclose(got[:, [0, 1, 2, 3]], towers, atol=POS_TOL_MM)


def test_interpreter_refuses_what_the_reader_refuses(interpreter, tmp_path):
    # an independent check of one refusal: G1 without F in G93 (RS274/NGC G93 rule)
    result = interpreter("G21 G93\nG1 X1 Y1 U1 V1\nM2\n", tmp_path)
    assert result["result"] > result["min_error"]
    assert "inverse time" in result["error"].lower()


@settings(max_examples=15, deadline=None)
@given(program=programs())
def test_any_writable_program_parses_and_agrees(program, interpreter, tmp_path_factory):
    job = job_for(Dialect.XYUV_INVERSE_TIME)
    result = interpreter(write_gcode(program, job), tmp_path_factory.mktemp("hyp"))
    _check_parse(result)
    kinds, towers, _ = _expected_moves(program, job)
    assert [m["kind"] for m in result["moves"]] == kinds
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]]).reshape(-1, 9)
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], towers, atol=POS_TOL_MM)


HAND_WRITTEN = {
    "inches-incremental-inverse-time": """(piece: H1)
N10 G20 G90 G17 G93
N20 G0 X1 Y2 U1.5 V2 (start)
N30 M3 S40
N40 G91 G1 X0.5 Y-0.25 U0.25 V0 F12
N50 X0 Y1 U0 V0.5 F3 ; only Y and V
N60 G90 G1 X 2 Y 3 U 1 V 1 F 0.5
N70 G4 P0.75
N80 G21 G1 X10 Y10 U10 V10 F2
M5
M2
""",
    "units-per-minute-modal": """G21 G94 G90
G0 X5 Y5 U5 V5
M3 S10
G1 X30 F600
Y40
U30 V40 F300
G91 X-10 Y-10 U-10 V-10
M5
M30
""",
}


@pytest.mark.parametrize("name", sorted(HAND_WRITTEN))
def test_reader_agrees_with_the_interpreter_on_hand_written_text(name, interpreter, tmp_path):
    # the same text through both readers: modes G20/G21, G90/G91, modal G1, comments,
    # line numbers and spaces must give the same positions and dwells
    text = HAND_WRITTEN[name]
    job = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.ALL_AXES, ("X", "Y", "U", "V"))
    ours = read_gcode(text, job)
    result = interpreter(text, tmp_path)
    _check_parse(result)
    motion = (ours.ops == Op.RAPID) | (ours.ops == Op.FEED)
    expected = np.vstack([ours.start[None, :], ours.towers[motion]])
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], expected, atol=1e-9)
    kinds = ["traverse"] + ["traverse" if o == Op.RAPID else "feed" for o in ours.ops[motion]]
    assert [m["kind"] for m in result["moves"]] == kinds
    dwells = ours.duration_s[ours.ops == Op.DWELL]
    np.testing.assert_allclose([d["seconds"] for d in result["dwells"]], dwells)


def test_a_program_on_a_riser_parses_and_stays_in_travel(interpreter, tmp_path):
    # a wire falling steeply along the blank (toolpath tests): lifted 55 mm on a riser, its
    # header names the riser, and the interpreter reads every position where the writer put
    # it, the lowest tower back inside the Y/V travel
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).parents[1] / "toolpath"))
    from toolpath_shapes import make_piece

    from wirecut.toolpath.build import build_program

    job = job_for(Dialect.XYUV_INVERSE_TIME)
    left = np.array([[200.0, 250.0], [800.0, 250.0]])
    right = np.array([[200.0, 20.0], [800.0, 20.0]])
    piece = make_piece(left, right, (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0))
    program, report, _ = build_program(piece, job, riser=True)
    assert program is not None and report.riser_mm > 0
    text = write_gcode(program, job)
    assert f"(riser under the blank mm: {report.riser_mm:.0f} [foam only" in text
    result = interpreter(text, tmp_path)
    _check_parse(result)
    kinds, towers, _ = _expected_moves(program, job)
    got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])
    np.testing.assert_allclose(got[:, XYUV_COLUMNS], towers, atol=POS_TOL_MM)
    low = job.machine.travel_y_mm[0]
    assert got[1:, [1, 7]].min() >= low - POS_TOL_MM
