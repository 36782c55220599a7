"""Tower positions: extending each wire position from the block faces to the two tower planes.

The wire is straight between the towers, so its crossings of the block faces z_left, z_right
fix its crossings of the tower planes z = 0 and z = span by linear extrapolation (similar
triangles): the point at plane z is (1 - t) P_L + t P_R with t = (z - z_left) / (z_right -
z_left). This is :meth:`wirecut.ruled.model.RuledCut.at_plane`, used here for both towers.

Travel. Every programmed position must lie inside ``travel_x_mm`` x ``travel_y_mm`` for both
towers, and the wire must not pass below the bed the blank stands on (``bed_y_mm``) at either
face of the blank: a raised table reaches beyond the blank's faces, and the wire would cut
into it. When only the sweep axes (X, U) leave their travel and the whole program's X/U range
fits inside it, the block can be re-placed along the sweep: :func:`travel_check` returns the
shift in x (mm) that brings every position inside, with the least movement. A wire that runs
too low (below the Y/V travel or below the bed at a face) can, when the caller allows it, be
lifted by standing the blank on a foam riser: :func:`travel_check` then returns the riser's
height, rounded up to whole ``RISER_STEP_MM`` with at least ``RISER_GAP_MM`` between the wire
and the bed, provided the lifted program still fits under the top of the travel. A program
wider or taller than the travel cannot be fixed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from wirecut.config import MachineSpec
from wirecut.ruled.model import RuledCut

__all__ = [
    "tower_positions",
    "face_points",
    "TravelCheck",
    "travel_check",
    "moved",
    "RISER_STEP_MM",
    "RISER_GAP_MM",
]

_EPS_MM = 1e-9
#: Risers are cut to whole steps of this height, mm (a height a shop marks with a rule).
RISER_STEP_MM = 5.0
#: Least height of the wire above the bed when the blank stands on a riser, mm.
RISER_GAP_MM = 5.0


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
    """Where a program's positions stand against the machine's travel and its bed.

    Attributes
    ----------
    ok : bool
        Every position inside travel and above the bed as it is.
    fixable : bool
        Not ok, but a shift along the sweep and, where allowed, a riser bring every position
        inside.
    shift_x_mm : float, mm, machine frame
        That shift along the sweep (0 when none is needed or the check cannot be fixed).
    riser_mm : float, mm
        Height of the foam riser the blank must stand on (0 when none is needed or allowed;
        when one was allowed but cannot be fixed, the height that was needed).
    axis : str
        The worst tower axis ("X", "Y", "U" or "V"), "" when every tower is inside travel.
    overshoot_mm : float, mm
        How far the worst position lies outside travel on that axis (0 when inside).
    below_bed_mm : float, mm
        How far the wire passes below the bed at the blank's faces (0 when it does not, or
        when no faces were given).
    """

    ok: bool
    fixable: bool
    shift_x_mm: float
    axis: str
    overshoot_mm: float
    riser_mm: float = 0.0
    below_bed_mm: float = 0.0


def _excess(values: np.ndarray, lo: float, hi: float) -> np.ndarray:
    return np.maximum(lo - values, 0.0) + np.maximum(values - hi, 0.0)


def travel_check(
    towers: np.ndarray,
    machine: MachineSpec,
    faces_z_mm: tuple[float, float] | None = None,
    *,
    riser: bool = False,
) -> TravelCheck:
    """Check tower positions (m, 4) mm against the travel and the bed.

    Parameters
    ----------
    towers : (m, 4) float, mm
        Every position of the program.
    machine : MachineSpec
        Travel, bed and span.
    faces_z_mm : (2,) float, mm, optional
        The blank's faces; the wire's crossings of them must not lie below the bed.
    riser : bool
        Allow lifting the blank on a riser when the wire runs too low.
    """
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
    axis_i = int(np.argmax(worst))
    axis = "XYUV"[axis_i] if worst[axis_i] > _EPS_MM else ""
    over = float(worst[axis_i]) if axis else 0.0
    below = 0.0
    if faces_z_mm is not None and len(t):
        low = min(float(face_points(t, float(z), machine.span_mm)[:, 1].min()) for z in faces_z_mm)
        below = max(machine.bed_y_mm - low, 0.0)
    if not axis and below <= _EPS_MM:
        return TravelCheck(True, False, 0.0, "", 0.0)
    no = TravelCheck(False, False, 0.0, axis, over, 0.0, below if below > _EPS_MM else 0.0)
    ys = t[:, [1, 3]]
    y_lo, y_hi = float(ys.min()), float(ys.max())
    lift = 0.0
    if below > _EPS_MM or y_lo < lo_y - _EPS_MM:
        if not riser:
            return no
        need = max(below, lo_y - y_lo, 0.0)
        lift = RISER_STEP_MM * math.ceil((need + RISER_GAP_MM) / RISER_STEP_MM - 1e-9)
    if y_hi + lift > hi_y + _EPS_MM:
        return replace(no, riser_mm=float(lift))
    xs = t[:, [0, 2]]
    x_min, x_max = float(xs.min()), float(xs.max())
    if x_max - x_min > hi_x - lo_x:
        return no
    shift = lo_x - x_min if x_min < lo_x else hi_x - x_max if x_max > hi_x else 0.0
    return TravelCheck(False, True, float(shift), axis, over, float(lift), no.below_bed_mm)


def moved(points: np.ndarray, dx_mm: float, dy_mm: float = 0.0) -> np.ndarray:
    """Add ``dx_mm`` to the x and ``dy_mm`` to the y coordinates: columns (0, 1) of (n, 2),
    columns (0, 1) and (2, 3) of (n, 4)."""
    p = np.array(points, float, copy=True)
    p[..., 0] += dx_mm
    p[..., 1] += dy_mm
    if p.shape[-1] == 4:
        p[..., 2] += dx_mm
        p[..., 3] += dy_mm
    return p
