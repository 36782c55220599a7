"""A machine program as data: the operations of one piece's cut, before any G-code text.

The toolpath stage builds a :class:`CutProgram`; the G-code writer turns it into text in a
dialect; the G-code reader turns text back into a :class:`CutProgram`; the replay simulator
works on that. So the writer and the reader meet in one type and a round trip is testable.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import IntEnum

import numpy as np

__all__ = ["Op", "CutProgram"]


class Op(IntEnum):
    """Kinds of operation, in program order."""

    RAPID = 0  # G0 to ``towers[i]``; never while the wire is within the block's extent
    FEED = 1  # G1 to ``towers[i]`` taking ``duration_s[i]`` seconds (4 axes linear in time)
    DWELL = 2  # G4 for ``duration_s[i]`` seconds; ``towers[i]`` repeats the current position
    HEAT_ON = 3  # M3 S<power>; ``towers[i]`` repeats the current position
    HEAT_OFF = 4  # M5; ``towers[i]`` repeats the current position


@dataclass(frozen=True)
class CutProgram:
    """One piece's program.

    Attributes
    ----------
    piece_id : str
        Piece id such as ``"P01"`` (validated: letters, digits, '-', '_').
    ops : (m,) int
        :class:`Op` of each operation.
    towers : (m, 4) float, mm, machine frame
        Position (X, Y, U, V) after operation i: (X, Y) the left tower at z = 0, (U, V) the
        right tower at z = span_mm.
    duration_s : (m,) float, s
        Time of a FEED or DWELL; 0 for the others (rapids are not timed by the program).
    start : (4,) float, mm
        Position before the first operation (the setup's home or approach point).
    heat_power : float
        S word of HEAT_ON.
    header : tuple of (str, str)
        Key/value lines for the program header (piece, stock, block, placement, kerf, ...).
        Values are plain text; the writer sanitizes them.
    """

    piece_id: str
    ops: np.ndarray
    towers: np.ndarray
    duration_s: np.ndarray
    start: np.ndarray
    heat_power: float = 0.0
    header: tuple[tuple[str, str], ...] = field(default=())

    def __post_init__(self) -> None:
        ops = np.asarray(self.ops, dtype=np.int64)
        towers = np.asarray(self.towers, float).reshape(-1, 4)
        dur = np.asarray(self.duration_s, float)
        if not (len(ops) == len(towers) == len(dur)):
            raise ValueError("CutProgram arrays must have one row per operation")
        object.__setattr__(self, "ops", ops)
        object.__setattr__(self, "towers", towers)
        object.__setattr__(self, "duration_s", dur)
        object.__setattr__(self, "start", np.asarray(self.start, float).reshape(4))

    @property
    def machine_time_s(self) -> float:
        """Sum of feed and dwell times, s (rapids excluded: their speed is the controller's)."""
        return float(self.duration_s[(self.ops == Op.FEED) | (self.ops == Op.DWELL)].sum())

    @property
    def dwell_time_s(self) -> float:
        """Sum of dwell times, s."""
        return float(self.duration_s[self.ops == Op.DWELL].sum())

    def positions(self) -> np.ndarray:
        """(m + 1, 4) mm: the start followed by the position after each operation."""
        return np.vstack([self.start[None, :], self.towers])
