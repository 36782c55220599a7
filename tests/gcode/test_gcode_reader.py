"""The reader on hand-written programs: modes, units, comments, and refusals."""

import numpy as np
import pytest
from gcode_programs import job_for
from hypothesis import given, settings
from hypothesis import strategies as st

from wirecut.config import Dialect, FeedRule
from wirecut.errors import GcodeError, WirecutError
from wirecut.gcode.reader import detect_dialect, read_gcode
from wirecut.toolpath.program import Op

INV = job_for(Dialect.XYUV_INVERSE_TIME)
UPM = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.FIRST_TOWER)
UPM_ALL = job_for(Dialect.FOUR_AXIS_UNITS_PER_MINUTE, FeedRule.ALL_AXES)


def test_inverse_time_durations_modal_motion_comments_and_line_numbers():
    text = """%
(piece: T1) ; a header comment
N10 G21 G90 G17 G64 P0.01 Q0.01 G93
N15 G61
N20 G0 X10 Y20 U10 V20
N30 M3 S45
N40 G1 X 3 0 Y20 U40 V25 F6 (one sixth of a minute)
N50 X30 Y40 F0.5 ; modal G1, unnamed axes keep their values
N60 G4 P1.25
N70 M5
N80 M2
G0 X999 (after M2: ignored)
"""
    p = read_gcode(text, INV)
    assert p.piece_id == "T1"
    assert p.ops.tolist() == [Op.HEAT_ON, Op.FEED, Op.FEED, Op.DWELL, Op.HEAT_OFF]
    np.testing.assert_array_equal(p.start, [10, 20, 10, 20])
    np.testing.assert_array_equal(p.towers[2], [30, 40, 40, 25])
    # inverse time: a move takes 1/F minutes (RS274/NGC G93, NIST IR 6556 3.5.19)
    np.testing.assert_allclose(p.duration_s, [0.0, 10.0, 120.0, 1.25, 0.0])
    assert p.heat_power == 45.0


def test_inches_incremental_and_units_per_minute_first_tower():
    text = "G20 G91 G94\nG0 X1 Y1 Z1 A1\nG1 X3 Y4 F60\nG1 Z2 A0 \nM2\n"
    p = read_gcode(text, UPM)
    # 1 in = 25.4 mm exactly (1959 agreement); G91 adds to the current position
    np.testing.assert_allclose(p.start, [25.4, 25.4, 25.4, 25.4])
    np.testing.assert_allclose(p.towers[0], [101.6, 127.0, 25.4, 25.4])
    np.testing.assert_allclose(p.towers[1], [101.6, 127.0, 76.2, 25.4])
    # first move: 5 in (3-4-5 triangle) at 60 in/min = 5 s; second: left tower still,
    # the right one moves 2 in at 60 in/min = 2 s (fallback of the first-tower rule)
    np.testing.assert_allclose(p.duration_s, [5.0, 2.0])


def test_all_axes_rule_uses_the_four_axis_distance():
    # (1, 2, 2, 4): sqrt(1 + 4 + 4 + 16) = 5 mm at 30 mm/min = 10 s (Euclidean norm)
    p = read_gcode("G94\nG1 X1 Y2 Z2 A4 F30\n", UPM_ALL)
    assert p.duration_s[0] == pytest.approx(10.0)
    np.testing.assert_array_equal(p.start, np.zeros(4))  # no leading G0: start at 0


def test_detect_dialect_from_feed_mode_words():
    assert detect_dialect("G93\nG1 X1 F1", UPM) is Dialect.XYUV_INVERSE_TIME
    assert detect_dialect("(G93 in a comment)\nG94", INV) is Dialect.FOUR_AXIS_UNITS_PER_MINUTE
    assert detect_dialect("G0 X1", UPM) is Dialect.FOUR_AXIS_UNITS_PER_MINUTE


@pytest.mark.parametrize(
    ("text", "line", "needle"),
    [
        ("G93\nG1 X1 Y1 U1 V1\n", 2, "without F in inverse time"),
        ("G93\nG1 X1 F0\n", 2, "F > 0"),
        ("G21\nG2 X1 Y1 I1 J0\n", 2, "arc G2 is not supported"),
        ("G3 X1\n", 1, "arc G3"),
        ("G1 X1.2.3 F1\n", 1, "malformed"),
        ("G1 X- F1\n", 1, "malformed"),
        ("G1 Q1\n", 1, "Q word without G64"),
        ("G1 K1\n", 1, "unknown word K1"),
        ("G93\nG1 Z1 F1\n", 2, "unknown word Z1"),
        ("G0 X1 (unclosed\n", 1, "not closed"),
        ("G0 X1 (a (b) c)\n", 1, "nested"),
        ("G0 X1 Y2 X3\n", 1, "twice"),
        ("G0 G1 X1 F1\n", 1, "same modal group"),
        ("M3 M5\n", 1, "same modal group"),
        ("G4\n", 1, "without P"),
        ("G4 P-1\n", 1, "negative dwell"),
        ("G4 P1 X2\n", 1, "axis words"),
        ("X5\n", 1, "no motion mode"),
        ("G94\nG1 X5\n", 2, "no feed rate"),
        ("G41\n", 1, "G41 is not supported"),
        ("G61.1\n", 1, "whole-numbered"),
        ("M6\n", 1, "M6 is not supported"),
        ("/G0 X1\n", 1, "block delete"),
        ("G0 X" + "9" * 400 + "\n", 1, "too large"),
        ("G1 X1 F-2\n", 1, "negative feed"),
        ("P2\n", 1, "P word without G4"),
        ("G61 P2\n", 1, "P word without G4"),
    ],
)
def test_refusals_name_the_line(text, line, needle):
    with pytest.raises(GcodeError) as info:
        read_gcode(text, INV if "G93" in text or "X" in text else UPM, dialect=None)
    message = str(info.value)
    assert message.startswith(f"line {line}: ")
    assert needle in message
    assert "\n" not in message


def test_non_text_input_is_refused():
    with pytest.raises(GcodeError):
        read_gcode(b"G0 X1", INV)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=200))
def test_reader_raises_only_wirecut_errors_on_any_text(text):
    try:
        read_gcode(text, INV)
    except WirecutError:
        pass


GCODE_ALPHABET = "GMXYUVZAFSPN0123456789.-+ ();%\n\t/E"


@settings(max_examples=400, deadline=None)
@given(st.text(alphabet=GCODE_ALPHABET, max_size=200))
def test_reader_raises_only_wirecut_errors_on_gcode_like_text(text):
    for job in (INV, UPM):
        try:
            read_gcode(text, job)
        except WirecutError:
            pass
