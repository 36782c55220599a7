"""Move timing: how long each feed takes so the wire cuts at the right speed within axis limits.

A feed moves all four axes linearly in time (G1 with inverse-time feed), so every point of the
wire, and in particular the wire's crossing of each block end face, moves at constant speed
along a straight segment during the move. The cut speed of the job (``wire.cut_speed_mm_s``)
is the speed of the faster of the two FACES (where the wire meets the foam), not of the towers:
in a tapered cut the tower further from the block's small end moves faster than either face.
The duration of a move is the least time meeting every limit:

    T = max( max(|dL|, |dR|) / v_cut,        faster face at cut speed
             max_axis |d axis| / v_axis,      no tower axis above max_axis_speed_mm_s
             max(|dL|, |dR|) / v_cap )        lag speed cap on tight curves (lag.plan_lag)

and the slower face follows at |d| / T.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["MoveTiming", "time_moves", "face_speeds", "axis_speeds"]


@dataclass(frozen=True)
class MoveTiming:
    """Durations and speeds of a run of feeds.

    Attributes
    ----------
    duration_s : (m,) float, s
        Time of each move (0 only for a move of zero length).
    left_speed_mm_s, right_speed_mm_s : (m,) float, mm/s
        Speed of the wire's crossing of the left and right block face on each move.
    axis_limited : (m,) bool
        Moves whose duration is set by ``max_axis_speed_mm_s`` rather than the cut speed.
    cap_limited : (m,) bool
        Moves slowed by the lag speed cap.
    """

    duration_s: np.ndarray
    left_speed_mm_s: np.ndarray
    right_speed_mm_s: np.ndarray
    axis_limited: np.ndarray
    cap_limited: np.ndarray

    @property
    def limited_count(self) -> int:
        """Number of moves slowed below the cut speed by an axis limit or a lag cap."""
        return int(np.count_nonzero(self.axis_limited | self.cap_limited))


def face_speeds(
    left: np.ndarray, right: np.ndarray, duration_s: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Face speeds (m,) mm/s of moves between face positions (m + 1, 2) mm taking (m,) s.

    Moves of zero duration get speed 0.
    """
    dl = np.linalg.norm(np.diff(np.asarray(left, float), axis=0), axis=1)
    dr = np.linalg.norm(np.diff(np.asarray(right, float), axis=0), axis=1)
    t = np.asarray(duration_s, float)
    safe = np.where(t > 0, t, 1.0)
    return np.where(t > 0, dl / safe, 0.0), np.where(t > 0, dr / safe, 0.0)


def axis_speeds(towers: np.ndarray, duration_s: np.ndarray) -> np.ndarray:
    """Axis speeds (m, 4) mm/s of moves between tower positions (m + 1, 4) mm taking (m,) s."""
    d = np.abs(np.diff(np.asarray(towers, float), axis=0))
    t = np.asarray(duration_s, float)
    safe = np.where(t > 0, t, 1.0)
    return np.where(t[:, None] > 0, d / safe[:, None], 0.0)


def time_moves(
    left: np.ndarray,
    right: np.ndarray,
    towers: np.ndarray,
    cut_speed_mm_s: float,
    max_axis_speed_mm_s: float,
    speed_cap_mm_s: np.ndarray | None = None,
) -> MoveTiming:
    """Durations of the moves through a sequence of positions.

    Parameters
    ----------
    left, right : (m + 1, 2) float, mm, machine frame
        The wire's crossing of the left and right block face at each position.
    towers : (m + 1, 4) float, mm, machine frame
        The same positions as tower axes (X, Y, U, V).
    cut_speed_mm_s : float, mm/s
        Speed of the faster face.
    max_axis_speed_mm_s : float, mm/s
        Top speed of any tower axis.
    speed_cap_mm_s : (m,) float, mm/s, optional
        Extra cap on the faster face's speed per move (inf for none).

    Returns
    -------
    MoveTiming
    """
    dl = np.linalg.norm(np.diff(np.asarray(left, float), axis=0), axis=1)
    dr = np.linalg.norm(np.diff(np.asarray(right, float), axis=0), axis=1)
    d_axis = np.abs(np.diff(np.asarray(towers, float), axis=0)).max(axis=1)
    d_face = np.maximum(dl, dr)
    t_cut = d_face / cut_speed_mm_s
    t_axis = d_axis / max_axis_speed_mm_s
    if speed_cap_mm_s is None:
        t_cap = np.zeros_like(t_cut)
    else:
        cap = np.asarray(speed_cap_mm_s, float)
        with np.errstate(divide="ignore"):
            t_cap = np.where(np.isfinite(cap), d_face / np.maximum(cap, 1e-9), 0.0)
    t = np.maximum(np.maximum(t_cut, t_axis), t_cap)
    rel = 1e-12 * np.maximum(t, 1.0)
    axis_limited = t_axis > t_cut + rel
    cap_limited = (t_cap > t_cut + rel) & (t_cap >= t_axis)
    axis_limited &= ~cap_limited
    vl, vr = face_speeds(left, right, t)
    return MoveTiming(t, vl, vr, axis_limited, cap_limited)
