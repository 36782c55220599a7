"""CutProgram to G-code text, in either dialect of docs/gcode.md.

The writer works in three steps, each a pure function:

1. :func:`normalize_program` rounds the positions as they will be written and makes the
   program writable: feeds that round to zero length become dwells of the same time (or
   vanish when they have no time either), feeds without a positive duration get the time of
   the machine's top axis speed, redundant heat switches and zero dwells are dropped, heat is
   switched on before the first feed and off at the end. The reader reads the written text
   back into exactly this program (positions within 0.0005 mm, durations within 5e-6).
2. :func:`check_travel` refuses any position outside the machine's travel with a
   :class:`~wirecut.errors.TravelError`, so no line outside travel is ever written.
3. :func:`write_gcode` formats the header comments, the dialect's modes and one block per
   operation; :func:`write_gcode_to` sends the same text to a stream.
"""

from __future__ import annotations

from typing import TextIO

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import GcodeError, JobError, TravelError
from wirecut.gcode.dialects import (
    DialectSpec,
    dialect_spec,
    feed_distance_mm,
    feed_words,
    format_position,
    format_significant,
    round_positions,
)
from wirecut.gcode.text import comment_lines, comment_safe
from wirecut.toolpath.program import CutProgram, Op

__all__ = [
    "SAFETY_CAUTIONS",
    "normalize_program",
    "check_travel",
    "write_gcode",
    "write_gcode_to",
]

SAFETY_CAUTIONS = (
    "CAUTION: the hot wire burns; keep hands clear while it is heated.",
    "CAUTION: overheated polystyrene gives off styrene and can ignite: ventilate the room, "
    "keep an extinguisher at hand and never leave the machine cutting unattended.",
    "CAUTION: the wire supply is high current; switch it off before touching the wire.",
    "Check this program against the machine before running it, and follow the machine's "
    "manual, local codes and licensed engineering practice.",
)
"""Cautions written at the head of every program."""


def _heat_power(program: CutProgram, job: JobProfile) -> float:
    return float(program.heat_power) if program.heat_power > 0 else float(job.machine.heat_power)


def normalize_program(program: CutProgram, job: JobProfile) -> CutProgram:
    """The program exactly as :func:`write_gcode` writes it.

    Parameters
    ----------
    program : CutProgram
        Any program; positions in mm, machine frame.
    job : JobProfile
        Supplies ``machine.max_axis_speed_mm_s`` (timing of untimed feeds) and
        ``machine.heat_power`` (used when ``program.heat_power`` is 0).

    Returns
    -------
    CutProgram
        Same piece id and header. ``towers (k, 4) mm`` rounded to 0.001 mm; every FEED
        moves at least one axis and has ``duration_s > 0``; every DWELL has
        ``duration_s > 0``; RAPIDs move; HEAT_ON precedes the first FEED and the program ends
        with the heat off.

    Raises
    ------
    JobError
        A position or duration is not finite, or an op code is unknown.
    """
    pid = program.piece_id
    towers = np.asarray(program.towers, float)
    start = np.asarray(program.start, float)
    durations = np.asarray(program.duration_s, float)
    if not (np.all(np.isfinite(towers)) and np.all(np.isfinite(start))):
        raise JobError(f"piece {pid}: program has a position that is not a finite number")
    if not np.all(np.isfinite(durations)):
        raise JobError(f"piece {pid}: program has a duration that is not a finite number")
    rounded = round_positions(towers).tolist()
    current = round_positions(start).tolist()
    seconds_given = durations.tolist()
    speed = float(job.machine.max_axis_speed_mm_s)
    ops: list[int] = []
    pos: list[list[float]] = []
    dur: list[float] = []
    heat_on = False
    heat_used = False

    def emit(op: Op, where: list[float], seconds: float) -> None:
        ops.append(int(op))
        pos.append(where)
        dur.append(seconds)

    for i, op in enumerate(program.ops.tolist()):
        target = rounded[i]
        if op == Op.RAPID:
            if target != current:
                emit(Op.RAPID, target, 0.0)
                current = target
        elif op == Op.FEED:
            seconds = seconds_given[i]
            if target == current:
                if seconds > 0.0:
                    emit(Op.DWELL, current, seconds)
                continue
            if seconds <= 0.0:
                seconds = max(abs(t - c) for t, c in zip(target, current, strict=True)) / speed
            if not heat_on and not heat_used:
                emit(Op.HEAT_ON, current, 0.0)
                heat_on = heat_used = True
            emit(Op.FEED, target, seconds)
            current = target
        elif op == Op.DWELL:
            if seconds_given[i] > 0.0:
                emit(Op.DWELL, current, seconds_given[i])
        elif op == Op.HEAT_ON:
            if not heat_on:
                emit(Op.HEAT_ON, current, 0.0)
                heat_on = heat_used = True
        elif op == Op.HEAT_OFF:
            if heat_on:
                emit(Op.HEAT_OFF, current, 0.0)
                heat_on = False
        else:
            raise JobError(f"piece {pid}: operation {i} has unknown op code {op!r}")
    if heat_on:
        emit(Op.HEAT_OFF, current, 0.0)
    return CutProgram(
        piece_id=pid,
        ops=np.asarray(ops, dtype=np.int64),
        towers=np.asarray(pos, float).reshape(-1, 4),
        duration_s=np.asarray(dur, float),
        start=round_positions(start),
        heat_power=_heat_power(program, job),
        header=program.header,
    )


def check_travel(program: CutProgram, job: JobProfile) -> None:
    """Refuse a program with any position outside the machine's travel.

    Parameters
    ----------
    program : CutProgram
        Positions ``start (4,)`` and ``towers (m, 4)`` in mm, machine frame.
    job : JobProfile
        ``machine.travel_x_mm`` bounds X and U; ``machine.travel_y_mm`` bounds Y and V.

    Raises
    ------
    TravelError
        Naming the piece, the axis, the operation and the overshoot in mm of the worst
        position.
    """
    positions = program.positions()
    lo = np.array([job.machine.travel_x_mm[0], job.machine.travel_y_mm[0]] * 2)
    hi = np.array([job.machine.travel_x_mm[1], job.machine.travel_y_mm[1]] * 2)
    over = np.maximum(lo - positions, positions - hi)
    if not np.any(over > 0.0):
        return
    row, axis = np.unravel_index(int(np.argmax(over)), over.shape)
    name = "XYUV"[axis]
    key = "travel_x_mm" if axis in (0, 2) else "travel_y_mm"
    where = "the start position" if row == 0 else f"operation {row - 1}"
    raise TravelError(
        f"piece {program.piece_id}: {name} = {positions[row, axis]:.3f} mm at {where} lies "
        f"{over[row, axis]:.3f} mm outside machine.{key} "
        f"[{lo[axis]:g}, {hi[axis]:g}]; no G-code written"
    )


def _motion(word: str, spec: DialectSpec, where: list[float]) -> str:
    a = spec.axes
    return (
        f"{word} {a[0]}{format_position(where[0])} {a[1]}{format_position(where[1])} "
        f"{a[2]}{format_position(where[2])} {a[3]}{format_position(where[3])}"
    )


def _header(program: CutProgram, job: JobProfile, spec: DialectSpec) -> list[str]:
    ops = program.ops
    n_feed = int(np.count_nonzero(ops == Op.FEED))
    n_rapid = int(np.count_nonzero(ops == Op.RAPID))
    n_dwell = int(np.count_nonzero(ops == Op.DWELL))
    a = spec.axes
    feed_note = (
        "G93 inverse time: F = 1 / move minutes"
        if spec.inverse_time
        else f"G94 F in mm/min over the {spec.feed_rule.value} distance"
    )
    texts = [
        f"piece: {comment_safe(program.piece_id, 40)}",
        f"written by wirecut, dialect {spec.dialect.value}, {feed_note}",
        f"units mm; {a[0]} {a[1]} = left tower at z = 0, {a[2]} {a[3]} = right tower at z = span",
        f"span: {job.machine.span_mm:.3f} mm",
    ]
    for key, value in program.header:
        texts.append(f"{comment_safe(key, 40)}: {comment_safe(value)}")
    texts += [
        f"machine time: {program.machine_time_s:.1f} s "
        f"(feeds {program.machine_time_s - program.dwell_time_s:.1f} s, "
        f"dwells {program.dwell_time_s:.1f} s; rapids not counted)",
        f"moves: {n_feed} feed, {n_rapid} rapid, {n_dwell} dwell",
    ]
    texts += list(SAFETY_CAUTIONS)
    lines: list[str] = []
    for t in texts:
        lines += comment_lines(t, spec.max_line_chars)
    return lines


def write_gcode(program: CutProgram, job: JobProfile) -> str:
    """G-code text of one program in the job's dialect (``job.machine.dialect``).

    Parameters
    ----------
    program : CutProgram
        Positions (X, Y, U, V) in mm, machine frame; durations in s.
    job : JobProfile
        Machine: dialect, axes and feed rule of the four-axis dialect, travel, top axis speed,
        heat power, span (for the header).

    Returns
    -------
    str
        The program, lines separated by ``"\\n"``, deterministic (no time stamps): header
        comments with the cautions, the dialect's mode line(s), ``G0`` to the start position,
        one block per operation of :func:`normalize_program` (``G0``/``G1``/``G4 P``/
        ``M3 S``/``M5``), ``M2``.

    Raises
    ------
    TravelError
        A position lies outside ``machine.travel_x_mm`` / ``machine.travel_y_mm``.
    JobError
        A position or duration is not finite.
    """
    spec = dialect_spec(job)
    prog = normalize_program(program, job)
    check_travel(prog, job)
    ops = prog.ops
    towers = prog.towers
    previous = prog.positions()[:-1]
    feed = ops == Op.FEED
    f_values = np.zeros(len(ops))
    if np.any(feed):
        distance = feed_distance_mm(towers[feed] - previous[feed], spec.feed_rule)
        f_values[feed] = feed_words(prog.duration_s[feed], distance, spec)
    power = format_significant(prog.heat_power) if prog.heat_power > 0 else "0"

    lines = _header(prog, job, spec)
    lines += list(spec.preamble)
    lines.append(_motion("G0", spec, prog.start.tolist()))
    rows = towers.tolist()
    f_list = f_values.tolist()
    seconds = prog.duration_s.tolist()
    for i, op in enumerate(ops.tolist()):
        if op == Op.FEED:
            lines.append(_motion("G1", spec, rows[i]) + f" F{format_significant(f_list[i])}")
        elif op == Op.RAPID:
            lines.append(_motion("G0", spec, rows[i]))
        elif op == Op.DWELL:
            lines.append(f"G4 P{format_significant(seconds[i])}")
        elif op == Op.HEAT_ON:
            lines.append(f"M3 S{power}")
        else:
            lines.append("M5")
    lines.append("M2")
    longest = max(len(line) for line in lines)
    if longest > spec.max_line_chars:
        raise GcodeError(
            f"piece {prog.piece_id}: a line of {longest} characters exceeds the dialect's "
            f"{spec.max_line_chars}; positions this large cannot be written"
        )
    return "\n".join(lines) + "\n"


def write_gcode_to(program: CutProgram, job: JobProfile, stream: TextIO) -> None:
    """Write :func:`write_gcode` text to an open text stream (nothing is written on error)."""
    stream.write(write_gcode(program, job))
