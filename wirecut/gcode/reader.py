"""G-code text back to a CutProgram: the project's own reader for both dialects.

It reads the subset of RS274/NGC (NIST IR 6556) a two-tower program needs and refuses the rest
with a :class:`~wirecut.errors.GcodeError` naming the line:

- motion ``G0``, ``G1`` (modal, as in RS274: a block of axis words alone repeats the mode),
  dwell ``G4 P<seconds>``; arcs ``G2``/``G3`` are refused (a straight wire between two
  towers moves on straight segments only);
- modes ``G17`` (plane, no effect on straight moves), ``G20``/``G21`` (inch, mm),
  ``G90``/``G91`` (absolute, incremental), ``G93``/``G94`` (inverse time, units per
  minute), ``G61``/``G64`` (path control, no effect on the positions);
- ``M3 S<power>`` heat on, ``M5`` heat off, ``M2``/``M30`` end (later lines are ignored);
- comments in parentheses (not nested) and after ``;``, spaces anywhere, line numbers ``N``,
  ``%`` lines. Block delete ``/`` is not supported.

Durations come from F: in inverse time (G93, F on every G1) a move takes ``1/F`` minutes;
in units per minute (G94, F modal) it takes ``distance / F`` minutes with the distance measured
by the job's ``machine.feed_rule`` (:func:`wirecut.gcode.dialects.feed_distance_mm`).

The position before the first move is unknown to a G-code file; the reader takes the target
of a leading ``G0`` (before any other motion) as the program's ``start``, with unnamed axes at
0, which is how :func:`wirecut.gcode.writer.write_gcode` begins. A program whose first motion
is a ``G1`` starts at (0, 0, 0, 0).
"""

from __future__ import annotations

import math
import re

import numpy as np

from wirecut.config import Dialect, FeedRule, JobProfile
from wirecut.errors import GcodeError
from wirecut.gcode.dialects import DialectSpec, dialect_spec
from wirecut.toolpath.program import CutProgram, Op

__all__ = ["read_gcode", "detect_dialect"]

INCH_MM = 25.4  # 1 in = 25.4 mm exactly (international yard and pound agreement, 1959)

_WORD = re.compile(r"([A-Z])([+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+))")
_BLOCK = re.compile(r"(?:[A-Z][+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+))*")
_SPACE = re.compile(r"[ \t]+")
_SPECIAL = re.compile(r"[();]")
_COMMENTS = re.compile(r"\([^()\n]*\)|;[^\n]*")
_G93 = re.compile(r"G0*93(?![0-9.])")
_G94 = re.compile(r"G0*94(?![0-9.])")

_G_SUPPORTED = {0, 1, 4, 17, 20, 21, 61, 64, 90, 91, 93, 94}
_G_MOTION = {0, 1}
_G_GROUPS = {  # modal groups of RS274/NGC (NIST IR 6556 table 4): two of one group = error
    0: "motion",
    1: "motion",
    4: "non-modal",
    17: "plane",
    20: "units",
    21: "units",
    90: "distance",
    91: "distance",
    93: "feed mode",
    94: "feed mode",
    61: "path control",
    64: "path control",
}
_M_SUPPORTED = {2, 3, 5, 30}
_M_GROUPS = {2: "stop", 30: "stop", 3: "spindle", 5: "spindle"}


class _Fail(Exception):
    """Internal: a message for the current line."""


def _modal_groups(
    letter: str, codes: list[int], supported: set[int], groups: dict[int, str]
) -> dict[str, int]:
    """The block's codes of one letter by modal group; refuses unsupported codes and two codes
    of one group in a block (RS274/NGC's rule)."""
    out: dict[str, int] = {}
    for code in codes:
        if code not in supported:
            raise _Fail(f"{letter}{code} is not supported")
        group = groups[code]
        if group in out:
            raise _Fail(f"{letter}{out[group]} and {letter}{code} are in the same modal group")
        out[group] = code
    return out


def detect_dialect(text: str, job: JobProfile) -> Dialect:
    """Which dialect a program is written in, from the feed mode words it uses.

    ``G93`` anywhere outside comments means ``xyuv-inverse-time``; else ``G94`` means
    ``four-axis-units-per-minute`` (axis letters from ``job.machine.axes``); a program with
    neither is taken to be in the job's dialect.
    """
    code = _SPACE.sub("", _COMMENTS.sub("", text.upper()))
    if _G93.search(code):
        return Dialect.XYUV_INVERSE_TIME
    if _G94.search(code):
        return Dialect.FOUR_AXIS_UNITS_PER_MINUTE
    return job.machine.dialect


def _strip_comments(line: str) -> tuple[str, list[str]]:
    """Code of one line with comments removed, and the comments' texts."""
    special = _SPECIAL.search(line)
    if special is None:
        return line, []
    code: list[str] = []
    comments: list[str] = []
    i = 0
    while special is not None:
        j = special.start()
        code.append(line[i:j])
        ch = line[j]
        if ch == ";":
            comments.append(line[j + 1 :])
            return "".join(code), comments
        if ch == ")":
            raise _Fail("')' without an opening '('")
        end = line.find(")", j + 1)
        if end < 0:
            raise _Fail("comment '(' is not closed on its line")
        inner = line[j + 1 : end]
        if "(" in inner:
            raise _Fail("nested comment: '(' inside a comment")
        comments.append(inner)
        i = end + 1
        special = _SPECIAL.search(line, i)
    code.append(line[i:])
    return "".join(code), comments


def _number(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise _Fail(f"number {text[:20]} is too large")
    return value


def _code(value: float, letter: str) -> int:
    if value != int(value):
        raise _Fail(f"{letter}{value:g} is not supported (only whole-numbered {letter}-codes)")
    return int(value)


class _Reader:
    """The modal state of one read, fed line by line."""

    def __init__(self, spec: DialectSpec, job: JobProfile) -> None:
        self.spec = spec
        self.job = job
        self.axis_index = {a: i for i, a in enumerate(spec.axes)}
        self.units = 1.0  # mm per programmed length unit
        self.absolute = True
        self.inverse_time = False  # RS274 starts in units per minute (G94)
        self.motion: int | None = None
        self.feed = 0.0  # modal F of G94, mm/min
        self.power = 0.0
        self.first_power: float | None = None
        self.position = [0.0, 0.0, 0.0, 0.0]
        self.start: list[float] | None = None
        self.moved = False
        self.ops: list[int] = []
        self.towers: list[tuple[float, ...]] = []
        self.durations: list[float] = []
        self.header: list[tuple[str, str]] = []
        self.ended = False
        self.code_seen = False

    def emit(self, op: Op, seconds: float = 0.0) -> None:
        self.ops.append(int(op))
        self.towers.append(tuple(self.position))
        self.durations.append(seconds)

    def line(self, raw: str) -> None:
        code, comments = _strip_comments(raw)
        code = _SPACE.sub("", code).upper()
        if not self.code_seen:
            for c in comments:
                key, sep, value = c.partition(":")
                if sep and key.strip():
                    self.header.append((key.strip(), value.strip()))
        if not code or code == "%":
            return
        self.code_seen = True
        if code.startswith("/"):
            raise _Fail("block delete '/' is not supported")
        if not _BLOCK.fullmatch(code):
            bad = _BLOCK.match(code).end()
            raise _Fail(f"malformed word at {code[bad : bad + 12]!r}")
        g: list[int] = []
        m: list[int] = []
        words: dict[str, float] = {}
        unknown = ""
        for letter, text in _WORD.findall(code):
            value = _number(text)
            if letter == "G":
                g.append(_code(value, "G"))
                if g[-1] in (2, 3):  # said first: the arc's I J K R words are unknown here
                    raise _Fail(
                        f"arc G{g[-1]} is not supported: the wire moves on straight lines only"
                    )
            elif letter == "M":
                m.append(_code(value, "M"))
            elif letter == "N":
                continue
            elif letter in words:
                raise _Fail(f"word {letter} appears twice")
            elif letter in self.axis_index or letter in "FSPQ":
                words[letter] = value
            elif not unknown:
                unknown = letter + text
        if unknown:
            axes = " ".join(self.spec.axes)
            raise _Fail(f"unknown word {unknown} (this dialect's axes are {axes})")
        self._execute(g, m, words)

    def _execute(self, g: list[int], m: list[int], words: dict[str, float]) -> None:
        groups = _modal_groups("G", g, _G_SUPPORTED, _G_GROUPS)
        m_groups = _modal_groups("M", m, _M_SUPPORTED, _M_GROUPS)
        dwell = groups.get("non-modal") == 4
        blending = groups.get("path control") == 64
        if "P" in words and not dwell and not blending:
            raise _Fail("P word without G4 or G64")
        if "Q" in words and not blending and "Q" not in self.axis_index:
            raise _Fail("Q word without G64")
        # RS274/NGC order of execution (NIST IR 6556 table 8)
        if "feed mode" in groups:
            self.inverse_time = groups["feed mode"] == 93
        if "units" in groups:
            self.units = INCH_MM if groups["units"] == 20 else 1.0
        if "F" in words:
            if words["F"] < 0.0:
                raise _Fail(f"negative feed F{words['F']:g}")
            if not self.inverse_time:
                self.feed = words["F"] * self.units
        if "S" in words:
            if words["S"] < 0.0:
                raise _Fail(f"negative S{words['S']:g}")
            self.power = words["S"]
        spindle = m_groups.get("spindle")
        if spindle == 3:
            if self.first_power is None:
                self.first_power = self.power
            self.emit(Op.HEAT_ON)
        elif spindle == 5:
            self.emit(Op.HEAT_OFF)
        axis_words = [a for a in self.spec.axes if a in words]
        if dwell:
            if axis_words:
                raise _Fail("G4 with axis words")
            if "P" not in words:
                raise _Fail("G4 without P<seconds>")
            if words["P"] < 0.0:
                raise _Fail(f"negative dwell P{words['P']:g}")
            self.emit(Op.DWELL, words["P"])
        if "distance" in groups:
            self.absolute = groups["distance"] == 90
        if "motion" in groups:
            self.motion = groups["motion"]
        if axis_words:
            if self.motion is None:
                raise _Fail("axis words with no motion mode (G0 or G1) in effect")
            self._move(words, axis_words)
        elif self.motion == 1 and "motion" in groups and self.inverse_time and "F" not in words:
            raise _Fail("G1 without F in inverse time mode (G93)")
        if "stop" in m_groups:
            self.ended = True

    def _move(self, words: dict[str, float], axis_words: list[str]) -> None:
        target = list(self.position)
        for a in axis_words:
            i = self.axis_index[a]
            value = words[a] * self.units
            target[i] = value if self.absolute else target[i] + value
        if not all(math.isfinite(v) for v in target):
            raise _Fail("position is too large")
        if self.motion == 0:
            self.position = target
            if not self.moved and self.start is None:
                self.start = list(target)
            else:
                self.emit(Op.RAPID)
            self.moved = True
            return
        if self.inverse_time:
            if "F" not in words:
                raise _Fail("G1 without F in inverse time mode (G93)")
            if words["F"] <= 0.0:
                raise _Fail(f"G1 with F{words['F']:g}: inverse time needs F > 0")
            seconds = 60.0 / words["F"]
        else:
            if self.feed <= 0.0:
                raise _Fail("G1 with no feed rate F in effect")
            d = [t - p for t, p in zip(target, self.position, strict=True)]
            # the scalar form of wirecut.gcode.dialects.feed_distance_mm
            if self.spec.feed_rule is FeedRule.ALL_AXES:
                distance = math.sqrt(d[0] ** 2 + d[1] ** 2 + d[2] ** 2 + d[3] ** 2)
            else:
                distance = math.hypot(d[0], d[1]) or math.hypot(d[2], d[3])
            seconds = 60.0 * distance / self.feed
        if not math.isfinite(seconds):
            raise _Fail("move duration is not finite")
        self.position = target
        self.moved = True
        self.emit(Op.FEED, seconds)


def read_gcode(
    text: str, job: JobProfile, piece_id: str = "", dialect: Dialect | str | None = None
) -> CutProgram:
    """Read a G-code program (either dialect) into a :class:`CutProgram`.

    Parameters
    ----------
    text : str
        The program.
    job : JobProfile
        Supplies ``machine.axes`` (letters of the four-axis dialect), ``machine.feed_rule``
        and ``machine.heat_power`` (when the program never sets ``S``).
    piece_id : str
        Id of the result; when empty, the value of a ``(piece: ...)`` header comment, if any.
    dialect : Dialect or str, optional
        Which axis letters to expect; by default :func:`detect_dialect`.

    Returns
    -------
    CutProgram
        ``towers (m, 4) mm machine frame`` after each operation, ``duration_s (m,) s``,
        ``start (4,) mm``, ``heat_power`` (S of the first M3), ``header`` from the
        ``(key: value)`` comments before the first block of code.

    Raises
    ------
    GcodeError
        On anything outside the supported subset, as one line: ``line N: what``.
    """
    if not isinstance(text, str):
        raise GcodeError(f"G-code must be text (str), got {type(text).__name__}")
    if dialect is None:
        dialect = detect_dialect(text, job)
    reader = _Reader(dialect_spec(job, dialect), job)
    for number, raw in enumerate(text.split("\n"), start=1):
        try:
            reader.line(raw.rstrip("\r"))
        except _Fail as fail:
            excerpt = raw.strip()[:60].encode("ascii", "backslashreplace").decode("ascii")
            raise GcodeError(f"line {number}: {fail}: {excerpt!r}") from None
        if reader.ended:
            break
    if not piece_id:
        piece_id = next((v for k, v in reader.header if k.lower() == "piece"), "")
    n = len(reader.ops)
    power = reader.first_power if reader.first_power is not None else job.machine.heat_power
    return CutProgram(
        piece_id=piece_id,
        ops=np.asarray(reader.ops, dtype=np.int64),
        towers=np.asarray(reader.towers, float).reshape(n, 4),
        duration_s=np.asarray(reader.durations, float),
        start=np.asarray(reader.start if reader.start is not None else np.zeros(4), float),
        heat_power=float(power),
        header=tuple(reader.header),
    )
