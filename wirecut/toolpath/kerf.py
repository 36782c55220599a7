"""Kerf: the slot the hot wire melts, and the offset of the wire path that compensates for it.

Model. The wire melts a slot wider than itself; the slower it moves, the longer each bit of
foam sees the heat and the wider the slot:

    kerf(v) = kerf_base_mm + kerf_speed_coeff_mm2_s / v        (v: local speed, mm/s)

with both constants measured on test cuts of the job's foam and wire (a calibration command
comes later; ``kerf_speed_coeff_mm2_s = 0`` gives a constant kerf). Each block face has its
own speed, so in a tapered cut the two faces get different kerfs.

Offset. The RuledCut is the surface the wire's EDGE must leave on the part, so the wire's
centre runs kerf/2 toward the waste side (the left of the sweep direction, machine +y for a
rising-x profile). Every move has a constant speed at each face (:mod:`wirecut.toolpath.timing`)
so the kerf is constant along a move: each profile segment is shifted along its own in-plane
normal by its own distance and consecutive shifted lines meet at their intersection (a mitre
join, exact for a polyline; capped at ``miter_limit`` times the offset).

Inclination. The offset is applied in the face plane, but kerf/2 must be measured
perpendicular to the cut surface. Locally the surface of one strip is the plane spanned by the
segment's direction t = (tx, ty, 0) and the wire's direction d; its unit normal is
n_s = t x d / |t x d|. Moving the wire line by delta along the in-plane normal n = (-ty, tx, 0)
moves it off that plane by delta (n . n_s) = delta cos(a), a the angle between n and n_s (the
wire's lean in the offset direction). So the in-plane offset that puts the edge kerf/2 off the
surface is

    delta = (kerf / 2) / cos(a),   cos(a) = |n . n_s|.

A wire along z (no lean) gives cos(a) = 1; a wire leaning along the segment (d in the plane of
t and z) changes nothing either, since then n_s = n.
"""

from __future__ import annotations

import numpy as np

from wirecut.config import WireSpec

__all__ = [
    "SLOW_FACE_SHARE",
    "kerf_floor_speed_mm_s",
    "kerf_mm",
    "vertex_average",
    "segment_directions",
    "inclination_cos",
    "offset_polyline",
    "segment_offsets",
]

_MIN_SPEED_MM_S = 1e-6
_PARALLEL_SIN = 0.02
_MIN_COS = 0.05  # leaner than ~87 degrees the offset is not meaningful; clamp


#: The kerf law is fitted to test cuts made near the cut speed (docs/calibration.md); below
#: this share of ``wire.cut_speed_mm_s`` it is not extrapolated: the kerf is held at its value
#: there, and the toolpath reports the slow face (finding ``slow-face``).
SLOW_FACE_SHARE = 0.25


def kerf_floor_speed_mm_s(wire: WireSpec) -> float:
    """Speed (mm/s) below which :func:`kerf_mm` holds the kerf constant."""
    return SLOW_FACE_SHARE * wire.cut_speed_mm_s


def kerf_mm(speed_mm_s: np.ndarray | float, wire: WireSpec) -> np.ndarray:
    """Kerf width (mm) at speed ``speed_mm_s`` (mm/s): ``kerf_base + coeff / v``.

    The steady-state law grows without bound as v -> 0 and is only known over the speeds of
    the test cuts: speeds under :func:`kerf_floor_speed_mm_s` (a quarter of the cut speed)
    count as that speed.
    """
    floor = max(kerf_floor_speed_mm_s(wire), _MIN_SPEED_MM_S)
    v = np.maximum(np.asarray(speed_mm_s, float), floor)
    return wire.kerf_base_mm + wire.kerf_speed_coeff_mm2_s / v


def vertex_average(segment_values: np.ndarray) -> np.ndarray:
    """Vertex values (m + 1,) from segment values (m,): the mean of the adjacent segments."""
    s = np.asarray(segment_values, float)
    if len(s) == 0:
        return s
    out = np.empty(len(s) + 1)
    out[0], out[-1] = s[0], s[-1]
    out[1:-1] = 0.5 * (s[:-1] + s[1:])
    return out


def segment_directions(path: np.ndarray) -> np.ndarray:
    """Unit directions (k - 1, 2) of the segments of a polyline (k, 2).

    A zero-length segment takes the direction of the nearest segment before it (or after it,
    at the start); an all-degenerate path gets +x.
    """
    d = np.diff(np.asarray(path, float), axis=0)
    n = np.linalg.norm(d, axis=1)
    good = n > 1e-12
    out = np.zeros_like(d)
    if not good.any():
        out[:, 0] = 1.0
        return out
    idx = np.where(good, np.arange(len(d)), -1)
    idx = np.maximum.accumulate(idx)
    idx[idx < 0] = int(np.argmax(good))
    return d[idx] / n[idx, None]


def inclination_cos(seg_dir: np.ndarray, wire_dir: np.ndarray) -> np.ndarray:
    """cos(a) (m,) between the in-plane normal of each segment and the normal of its strip.

    Parameters
    ----------
    seg_dir : (m, 2) float, unit, machine frame
        Directions of the profile segments in the face plane.
    wire_dir : (m, 3) float, machine frame
        Wire direction of each segment's strip (need not be unit).

    Returns
    -------
    (m,) float
        ``|n . n_s|`` with n = (-ty, tx, 0) and n_s = t x d / |t x d|, floored at 0.05.
    """
    t = np.column_stack([seg_dir, np.zeros(len(seg_dir))])
    d = np.asarray(wire_dir, float)
    ns = np.cross(t, d)
    norm = np.linalg.norm(ns, axis=1)
    ns = ns / np.where(norm > 0, norm, 1.0)[:, None]
    n = np.column_stack([-t[:, 1], t[:, 0], np.zeros(len(t))])
    c = np.abs(np.sum(n * ns, axis=1))
    return np.where(norm > 0, np.maximum(c, _MIN_COS), 1.0)


def offset_polyline(
    path: np.ndarray, delta: np.ndarray, side: float = 1.0, miter_limit: float = 4.0
) -> tuple[np.ndarray, int]:
    """Shift each segment of an open polyline by its own distance and join with mitres.

    Parameters
    ----------
    path : (k, 2) float, mm
        The polyline, in its plane.
    delta : (k - 1,) float, mm
        Offset distance of each segment (>= 0).
    side : float
        +1 shifts toward the left normal (-ty, tx) of the direction of travel (the waste side
        of a cut traversed in sweep order), -1 toward the right.
    miter_limit : float
        Largest join displacement as a multiple of the larger adjacent offset; sharper joins
        are clamped along the bisector.

    Returns
    -------
    offset : (k, 2) float, mm
        The shifted polyline, one vertex per input vertex.
    clamped : int
        Number of joins clamped by the mitre limit.
    """
    p = np.asarray(path, float)
    dl = np.asarray(delta, float) * float(np.sign(side) or 1.0)
    k = len(p)
    u = segment_directions(p)
    n = np.column_stack([-u[:, 1], u[:, 0]])  # left normals (k - 1, 2)
    out = np.empty_like(p)
    out[0] = p[0] + dl[0] * n[0]
    out[-1] = p[-1] + dl[-1] * n[-1]
    if k == 2:
        return out, 0
    na, nb = n[:-1], n[1:]
    da, db = dl[:-1], dl[1:]
    # each inner vertex moves along the bisector of its two segment normals by the mean of their
    # offsets over cos(turn / 2): the exact mitre where the two offsets are equal, and, where
    # they differ (a speed change at the vertex), off the two shifted lines by at most
    # |delta_a - delta_b| / 2. The intersection of the two shifted lines would be exact there
    # but ill-conditioned: it slides along the lines by (delta_a - delta_b) / sin(turn), which
    # for a gentle turn is a long way and feeds back into the face speeds and the kerf
    bis = na + nb
    half_cos = 0.5 * np.linalg.norm(bis, axis=1)  # cos(turn / 2)
    reversal = half_cos < 1e-9
    bis = np.where(reversal[:, None], na, bis / np.where(reversal, 1.0, 2.0 * half_cos)[:, None])
    mean = 0.5 * (da + db)
    reach = np.abs(mean) / np.maximum(half_cos, 1e-12)
    cap = miter_limit * np.maximum(np.abs(da), np.abs(db))
    over = reach > cap + 1e-12
    length = np.where(over, cap, reach) * np.sign(mean)
    out[1:-1] = p[1:-1] + bis * length[:, None]
    return out, int(np.count_nonzero(over))


def segment_offsets(path: np.ndarray, wire_dir: np.ndarray, kerf_seg_mm: np.ndarray) -> np.ndarray:
    """In-plane offsets (m,) mm of each segment: ``(kerf / 2) / cos(a)``.

    Parameters
    ----------
    path : (m + 1, 2) float, mm, machine frame
        Profile (or traced wire path) in one plane z = const.
    wire_dir : (m, 3) float, machine frame
        Wire direction on each segment's move.
    kerf_seg_mm : (m,) float, mm
        Kerf on each segment.
    """
    c = inclination_cos(segment_directions(path), wire_dir)
    return 0.5 * np.asarray(kerf_seg_mm, float) / c
