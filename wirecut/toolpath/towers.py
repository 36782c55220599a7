"""Tower positions: extending each wire position from the block faces to the two tower planes.

The wire is straight between the towers, so its crossings of the block faces z_left, z_right
fix its crossings of the tower planes z = 0 and z = span by linear extrapolation (similar
triangles): the point at plane z is (1 - t) P_L + t P_R with t = (z - z_left) / (z_right -
z_left). This is :meth:`wirecut.ruled.model.RuledCut.at_plane`, used here for both towers.

Travel. Every programmed position must lie inside ``travel_x_mm`` x ``travel_y_mm`` for both
towers. When only the sweep axes (X, U) leave their travel and the whole program's X/U range
fits inside it, the block can be re-placed along the sweep: :func:`travel_check` returns the
shift in x (mm) that brings every position inside, with the least movement. Height cannot be
fixed that way (the block stands on the bed), nor can a program wider than the travel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.config import MachineSpec
from wirecut.ruled.model import RuledCut

__all__ = ["tower_positions", "face_points", "TravelCheck", "travel_check", "shift_x"]

_EPS_MM = 1e-9


def tower_positions(
    left: np.ndarray, right: np.ndarray, z_left: float, z_right: float, span_mm: float
) -> np.ndarray:
    """Tower axes (m, 4) = (X, Y, U, V) mm of wire lines through face points.

    Parameters
    ----------
    left, right : (m, 2) float, mm, machine frame
        The wire's crossings of the planes z = z_left and z = z_right.
    z_left, z_right : float, mm, machine frame
        The two face planes, z_left < z_right.
    span_mm : float, mm
        Tower span: X, Y at z = 0 and U, V at z = span_mm.
    """
    line = RuledCut(left, right, z_left, z_right, np.eye(4))
    return np.column_stack([line.at_plane(0.0), line.at_plane(span_mm)])


def face_points(towers: np.ndarray, z_mm: float | np.ndarray, span_mm: float) -> np.ndarray:
    """The wire's crossing (m, 2) mm of plane(s) z from tower axes (m, 4) mm.

    ``z_mm`` is a float (one plane) or an (p,) array, which gives (p, m, 2).
    """
    t = np.asarray(towers, float)
    z = np.asarray(z_mm, float)
    s = z / span_mm
    if s.ndim == 0:
        return (1.0 - s) * t[:, :2] + s * t[:, 2:]
    return (1.0 - s)[:, None, None] * t[None, :, :2] + s[:, None, None] * t[None, :, 2:]


@dataclass(frozen=True)
class TravelCheck:
    """Where a program's positions stand against the machine's travel.

    Attributes
    ----------
    ok : bool
        Every position inside travel as it is.
    fixable : bool
        Not ok, but a shift along the sweep brings every position inside.
    shift_x_mm : float, mm, machine frame
        That shift (0 when ok or not fixable).
    axis : str
        The worst axis ("X", "Y", "U" or "V"), "" when ok.
    overshoot_mm : float, mm
        How far the worst position lies outside travel on that axis (0 when ok).
    """

    ok: bool
    fixable: bool
    shift_x_mm: float
    axis: str
    overshoot_mm: float


def _excess(values: np.ndarray, lo: float, hi: float) -> np.ndarray:
    return np.maximum(lo - values, 0.0) + np.maximum(values - hi, 0.0)


def travel_check(towers: np.ndarray, machine: MachineSpec) -> TravelCheck:
    """Check tower positions (m, 4) mm against the travel and find a sweep shift if one helps."""
    t = np.asarray(towers, float)
    lo_x, hi_x = machine.travel_x_mm
    lo_y, hi_y = machine.travel_y_mm
    excess = np.column_stack(
        [
            _excess(t[:, 0], lo_x, hi_x),
            _excess(t[:, 1], lo_y, hi_y),
            _excess(t[:, 2], lo_x, hi_x),
            _excess(t[:, 3], lo_y, hi_y),
        ]
    )
    worst = excess.max(axis=0)
    if worst.max() <= _EPS_MM:
        return TravelCheck(True, False, 0.0, "", 0.0)
    axis_i = int(np.argmax(worst))
    axis = "XYUV"[axis_i]
    over = float(worst[axis_i])
    if max(worst[1], worst[3]) > _EPS_MM:
        return TravelCheck(False, False, 0.0, axis, over)
    xs = t[:, [0, 2]]
    x_min, x_max = float(xs.min()), float(xs.max())
    if x_max - x_min > hi_x - lo_x:
        return TravelCheck(False, False, 0.0, axis, over)
    shift = lo_x - x_min if x_min < lo_x else hi_x - x_max
    return TravelCheck(False, True, float(shift), axis, over)


def shift_x(points: np.ndarray, shift_mm: float) -> np.ndarray:
    """Add ``shift_mm`` to the x coordinates: columns 0 of (n, 2), columns 0 and 2 of (n, 4)."""
    p = np.array(points, float, copy=True)
    p[..., 0] += shift_mm
    if p.shape[-1] == 4:
        p[..., 2] += shift_mm
    return p
