"""Comments cannot be broken by hostile user text."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from wirecut.gcode.text import comment_block, comment_lines, comment_safe

# Characters that end or open a comment or a block, or delimit a program, in RS274/NGC
# (NIST IR 6556 section 3.3.4 "Comments and messages"; ';' and '%' as used by many controllers).
FORBIDDEN = set("();%\n\r")

HOSTILE = [
    "x) G0 X-999 (",
    "long)\nG1 X0 F1\n(",
    "a;b M3 S100",
    "%\nM2",
    "\r(\r)",
    "MSG, operator fooled",
    "  debug,#<_x>",
    "tab\there\x00nul\x7fdel",
    "Grüße ☃ 丁",
    "(" * 300,
]


@pytest.mark.parametrize("text", HOSTILE)
def test_hostile_text_leaves_no_comment_breaker(text):
    safe = comment_safe(text)
    assert not (set(safe) & FORBIDDEN)
    assert all(32 <= ord(c) <= 126 for c in safe)  # printable ASCII (ASCII table)
    assert len(safe) <= 200


def test_parentheses_become_brackets_and_words_stay_inside():
    # the stock name of the brief: the G0 must stay comment text, not a live block
    assert comment_block("x) G0 X-999 (") == "(x] G0 X-999 [)"


@pytest.mark.parametrize("text", ["MSG, hello", "debug,1", " Print, x", "LOGOPEN,f", "AXIS,stop"])
def test_active_comment_keywords_are_neutralised(text):
    # LinuxCNC acts on comments opening with MSG, DEBUG, PRINT, LOG..., AXIS, (LinuxCNC
    # G-code manual, "Comments" and "Messages"); such text must not open a comment.
    block = comment_block(text)
    assert block.startswith("(note ")
    for line in comment_lines(text, 80):
        assert line.startswith("(note ") or line.startswith("(- ")


def test_length_limit_and_ellipsis():
    assert comment_safe("a" * 500, 20) == "a" * 17 + "..."
    assert len(comment_safe("abc", 2)) == 2


@given(st.text(max_size=400), st.integers(12, 120))
def test_wrapped_lines_are_single_closed_comments(text, width):
    for line in comment_lines(text, width):
        assert len(line) <= width
        assert line[0] == "(" and line[-1] == ")"
        inner = line[1:-1]
        assert not (set(inner) & FORBIDDEN)
