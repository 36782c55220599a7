"""Replay a machine program: the wire over time, the surface it cuts, and its deviation.

The replay knows only the program (e.g. read back from G-code), the block and the job: never
the planned cut. It is the independent check of the toolpath stage.

Model (docs/methods-toolpath.md):

- Motion. Within a FEED the four axes move linearly in time over the move's own duration, so
  the straight line between the towers crosses every plane z = const at a point moving at
  constant velocity: C_z(t) = (1 - z/L) (X, Y)(t) + (z/L) (U, V)(t). A DWELL holds the towers.
  A RAPID is taken as instantaneous (its speed is the controller's).
- Lag. In each of ``planes`` sections across the block (the two faces included) the wire's
  actual point is P_z = C_z + D_z, the deflection D_z relaxing as a first-order system toward
  its steady value: dD/dt = (D_ss - D) / tau, tau = ``lag_relax_s``, with
  D_ss = -lag(v_z, b) s(z) u_z while the wire is in foam (u_z, v_z: direction and speed of C_z,
  s(z) the taut-string deflection shape of :func:`wirecut.toolpath.lag.deflection_shape`) and 0
  in the air. Within a sub-step of constant D_ss the solution is exact:
  D <- D_ss + (D - D_ss) exp(-h / tau).
- Kerf. Each sub-step's kerf comes from the speed of C_z on its move (the program's own
  durations), kerf(v) = base + coeff / v; at rest (dwell) the kerf of the last moving feed is
  kept, the steady model saying nothing about a resting wire. The cut edge is the traced path
  shifted kerf/2 toward the part (the right of the sweep direction) with the inclination rule
  delta = (kerf/2) / cos(a) of :mod:`wirecut.toolpath.kerf`, mitre joins.
- Surface. The edges in the planes, with one vertex per sub-step in every plane, are joined
  linearly between neighbouring planes. A target sample at (x, y, z) is measured against the
  section of that surface at its own z: the in-plane distance to the section polyline, signed
  + where the cut lies on the waste side of the sample (foam left on the part), scaled by the
  in-plane part of the sample's normal to give the distance along the normal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import JobError
from wirecut.toolpath.kerf import kerf_mm, offset_polyline, segment_offsets
from wirecut.toolpath.lag import deflection_shape, mid_span_lag_mm
from wirecut.toolpath.program import CutProgram, Op
from wirecut.toolpath.towers import face_points

if TYPE_CHECKING:
    from wirecut.pieces.piece import Block, Piece

__all__ = [
    "ReplayedSurface",
    "ReplayResult",
    "replay_cut_surface",
    "surface_deviation",
    "weighted_quantile",
    "replay",
]

_MAX_SEGMENT_MM = 2.0  # longest segment the distance search works with
_SEARCH_SEGMENTS = 2  # segments on each side of the first guess
_BIN_SHIFT_MM = 4.0  # most a section vertex moves along x within one bin of w
_MAX_BINS = 16  # bins of w between two planes at most
_CANDIDATE_CHUNK = 4096  # points whose candidate segments are tested at once


@dataclass(frozen=True)
class ReplayedSurface:
    """The surface a program cuts, as edge curves in planes across the block.

    Attributes
    ----------
    z_mm : (p,) float, mm, machine frame
        The section planes, from the left face to the right face.
    time_s : (n,) float, s
        Time of each trace point from the heat coming on (feeds and dwells only).
    wire : (p, n, 2) float, mm, machine frame
        The wire's actual point (lag included) in each plane.
    cut : (p, n, 2) float, mm, machine frame
        The cut edge on the part side in each plane (kerf applied).
    move_speed_mm_s : (p, m) float, mm/s
        Speed of the towers' line at each plane on each program operation (0 except feeds).
    kerf_mm : (p, m) float, mm
        Kerf of each feed at each plane (NaN for other operations).
    """

    z_mm: np.ndarray
    time_s: np.ndarray
    wire: np.ndarray
    cut: np.ndarray
    move_speed_mm_s: np.ndarray
    kerf_mm: np.ndarray


@dataclass(frozen=True)
class ReplayResult:
    """A program's replayed cut measured against target samples.

    Attributes
    ----------
    surface : ReplayedSurface
        The replayed cut.
    signed : (n,) float, mm
        Per sample deviation along the target normal: + = cut on the waste side (excess foam
        left), - = gouge into the part.
    within : (n,) bool
        |signed| <= tolerance.surface_mm.
    max_abs_mm, rms_mm, p95_mm : float, mm
        Largest, area-weighted root mean square and area-weighted 95th percentile of |signed|.
    machine_time_s : float, s
        Feeds and dwells from the program's own durations.
    dwell_time_s : float, s
        Dwells of the program.
    left_speed_mm_s, right_speed_mm_s : (m,) float, mm/s
        Face speeds per program operation from the program's durations (0 except feeds).
    """

    surface: ReplayedSurface
    signed: np.ndarray
    within: np.ndarray
    max_abs_mm: float
    rms_mm: float
    p95_mm: float
    machine_time_s: float
    dwell_time_s: float
    left_speed_mm_s: np.ndarray
    right_speed_mm_s: np.ndarray


def _heated_range(ops: np.ndarray) -> tuple[int, int]:
    on = np.flatnonzero(ops == Op.HEAT_ON)
    if len(on) == 0:
        raise JobError("the program never switches the heat on: nothing is cut")
    first = int(on[0])
    off = np.flatnonzero((ops == Op.HEAT_OFF) & (np.arange(len(ops)) > first))
    last = int(off[0]) if len(off) else len(ops)
    if np.any(ops[last + 1 :] == Op.HEAT_ON):
        raise JobError("replay handles one heated run per program; this one has several")
    return first, last


def replay_cut_surface(
    program: CutProgram, block: Block, job: JobProfile, planes: int = 9
) -> ReplayedSurface:
    """Trace the wire of ``program`` through ``planes`` sections of ``block``.

    Parameters
    ----------
    program : CutProgram
        Operations, tower positions (m, 4) mm, durations (m,) s.
    block : Block
        The blank (machine frame): its faces fix the planes, its box says where the foam is.
    job : JobProfile
        Span, kerf and lag constants.
    planes : int
        Number of section planes (>= 2), evenly spaced from face to face.
    """
    if planes < 2:
        raise JobError(f"planes = {planes!r} must be at least 2")
    machine, wire = job.machine, job.wire
    span = machine.span_mm
    z1, z2 = float(block.z_mm[0]), float(block.z_mm[1])
    z = np.linspace(z1, z2, planes)
    shape = deflection_shape(z, z1, z2, span)
    lag_per_speed = float(mid_span_lag_mm(1.0, z2 - z1, wire, span)) * shape  # (p,) s
    tau = wire.lag_relax_s
    h_max = tau / 10.0
    pos = program.positions()
    ops, dur = program.ops, program.duration_s
    m = len(ops)
    first, last = _heated_range(ops)
    x_lo, x_hi, y_top = block.x_mm[0], block.x_mm[1], block.y_mm[1]

    pts_all = face_points(pos, z, span)  # (p, m + 1, 2)
    speeds = np.zeros((planes, m))
    kerfs = np.full((planes, m), np.nan)
    d = np.zeros((planes, 2))
    trace = [pts_all[:, first + 1].copy()]
    times = [0.0]
    seg_kerf: list[np.ndarray] = []
    seg_dir: list[np.ndarray] = []
    t_now = 0.0
    last_kerf = np.full(planes, float(kerf_mm(wire.cut_speed_mm_s, wire)))
    lagging = wire.lag_ref_mm > 0
    for i in range(first + 1, last):
        op = ops[i]
        if op not in (Op.FEED, Op.DWELL, Op.RAPID):
            continue
        a, b = pts_all[:, i], pts_all[:, i + 1]
        delta = b - a
        T = float(dur[i]) if op != Op.RAPID else 0.0
        dist = np.linalg.norm(delta, axis=1)
        if op == Op.FEED and T > 0:
            v = dist / T
            speeds[:, i] = v
            moving = v > 1e-12
            k_move = np.where(moving, kerf_mm(np.where(moving, v, 1.0), wire), last_kerf)
            kerfs[:, i] = k_move
            last_kerf = k_move
        else:
            v = np.zeros(planes)
            k_move = last_kerf
        u = delta / np.where(dist > 0, dist, 1.0)[:, None]
        ta, tb = pos[i], pos[i + 1]
        wdir = 0.5 * (
            np.array([ta[2] - ta[0], ta[3] - ta[1], span])
            + np.array([tb[2] - tb[0], tb[3] - tb[1], span])
        )
        n_sub = max(1, math.ceil(T / h_max)) if (lagging and T > 0) else 1
        h = T / n_sub
        decay = math.exp(-h / tau) if T > 0 else 1.0

        def in_foam(p_mid: np.ndarray) -> np.ndarray:
            return (p_mid[..., 0] >= x_lo) & (p_mid[..., 0] <= x_hi) & (p_mid[..., 1] <= y_top)

        pull = -(lag_per_speed * v)[:, None] * u  # (p, 2) the steady lag while in the foam
        frac = (np.arange(n_sub) + 0.5) / n_sub
        c_mid = a[:, None, :] + frac[None, :, None] * delta[:, None, :]  # (p, s, 2)
        # all substeps at once, assuming each plane stays in (or out of) the foam for the
        # whole move as it is at the move's start: d_s = d_ss + (d_0 - d_ss) decay^s
        foam0 = in_foam(c_mid[:, 0] + d)
        d_ss = np.where(foam0[:, None], pull, 0.0)
        power = decay ** np.arange(n_sub + 1) if T > 0 else np.ones(n_sub + 1)
        d_all = d_ss[:, None, :] + (d - d_ss)[:, None, :] * power[None, :, None]  # (p, s+1, 2)
        if not np.array_equal(in_foam(c_mid + d_all[:, :-1]), np.repeat(foam0[:, None], n_sub, 1)):
            # a plane enters or leaves the foam during the move: step it substep by substep
            dd = d.copy()
            for s in range(n_sub):
                d_s = np.where(in_foam(c_mid[:, s] + dd)[:, None], pull, 0.0)
                if T > 0:
                    dd = d_s + (dd - d_s) * decay
                d_all[:, s + 1] = dd
        ends = a[:, None, :] + (np.arange(1, n_sub + 1) / n_sub)[None, :, None] * delta[:, None, :]
        trace.extend(np.moveaxis(ends + d_all[:, 1:], 1, 0))
        d = d_all[:, -1].copy()
        times.extend(t_now + h * np.arange(1, n_sub + 1))
        t_now += h * n_sub
        seg_kerf.extend([k_move] * n_sub)
        seg_dir.extend([wdir] * n_sub)
    wire_pts = np.stack(trace, axis=1)  # (p, n, 2)
    if wire_pts.shape[1] < 2:
        raise JobError("the program's heated run has no move: nothing is cut")
    kerf_seg = np.stack(seg_kerf, axis=1)  # (p, n - 1)
    dirs = np.asarray(seg_dir)  # (n - 1, 3)
    cut = np.empty_like(wire_pts)
    for j in range(planes):
        delta_j = segment_offsets(wire_pts[j], dirs, kerf_seg[j])
        cut[j], _ = offset_polyline(wire_pts[j], delta_j, side=-1.0)
    return ReplayedSurface(z, np.asarray(times), wire_pts, cut, speeds, kerfs)


def _subdivide(lo: np.ndarray, hi: np.ndarray, max_len_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """Split segments of two matching polylines (n, 2) so none is longer than ``max_len_mm``
    in either; linear, so every section between them keeps its shape."""
    seg = np.maximum(
        np.linalg.norm(np.diff(lo, axis=0), axis=1), np.linalg.norm(np.diff(hi, axis=0), axis=1)
    )
    n_sub = np.maximum(1, np.ceil(seg / max_len_mm).astype(int))
    if np.all(n_sub == 1):
        return lo, hi
    s = np.concatenate([np.arange(n) / n for n in n_sub] + [np.array([0.0])])
    i = np.concatenate([np.full(n, j) for j, n in enumerate(n_sub)] + [np.array([len(lo) - 1])])
    i1 = np.minimum(i + 1, len(lo) - 1)
    return (
        (1 - s)[:, None] * lo[i] + s[:, None] * lo[i1],
        (1 - s)[:, None] * hi[i] + s[:, None] * hi[i1],
    )


def _segment_normal(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Left unit normals (c, 2) of segments a -> b (c, 2); zero for zero length."""
    ab = b - a
    n = np.linalg.norm(ab, axis=1)
    return np.column_stack([-ab[:, 1], ab[:, 0]]) / np.where(n > 0, n, 1.0)[:, None]


def _in_window(lo, hi, w, q, first, m: int):
    """Nearest segment of each point's section among segments first .. first + 2m: (segment
    (c,), position on it t (c,), foot point (c, 2), squared distance (c,)). The window's
    2m + 2 vertices are interpolated once and shared by neighbouring segments."""
    n = len(lo)
    verts = np.minimum(first[:, None] + np.arange(2 * m + 2)[None, :], n - 1)  # (c, 2m + 2)
    segs = np.minimum(verts[:, :-1], n - 2)  # (c, 2m + 1)
    ww = w[:, None, None]
    pts = (1 - ww) * lo[verts] + ww * hi[verts]
    a, b = pts[:, :-1], pts[:, 1:]
    ab = b - a
    l2 = np.sum(ab * ab, axis=2)
    qq = q[:, None, :]
    t = np.clip(np.sum((qq - a) * ab, axis=2) / np.where(l2 > 0, l2, 1.0), 0.0, 1.0)
    foot = a + t[..., None] * ab
    d2 = np.sum((qq - foot) ** 2, axis=2)
    best = np.argmin(d2, axis=1)
    rows = np.arange(len(q))
    return segs[rows, best], t[rows, best], foot[rows, best], d2[rows, best]


def _on_segments(lo, hi, w, q, seg):
    """Foot point on segment ``seg`` (k,) of each point's own section: (t (k,), foot (k, 2),
    squared distance (k,)) for points q (k, 2) at w (k,)."""
    wr = w[:, None]
    a = (1 - wr) * lo[seg] + wr * hi[seg]
    ab = (1 - wr) * lo[seg + 1] + wr * hi[seg + 1] - a
    l2 = np.sum(ab * ab, axis=1)
    t = np.clip(np.sum((q - a) * ab, axis=1) / np.where(l2 > 0, l2, 1.0), 0.0, 1.0)
    foot = a + t[:, None] * ab
    return t, foot, np.sum((q - foot) ** 2, axis=1)


def _signed_to_sections(lo: np.ndarray, hi: np.ndarray, w: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Signed in-plane distance (c,) from points q (c, 2) to the sections (1 - w) lo + w hi.

    ``lo``, ``hi`` (n, 2) are matching polylines in two neighbouring planes and w (c,) each
    point's position between them. + where the point lies to the right of the section's
    direction (the part side of a cut traversed with the waste on its left), i.e. where the
    cut passes on the waste side of it. At a vertex the sign comes from the sum of the two
    adjacent segments' normals (the pseudo-normal of a polyline).

    The nearest segment is found exactly, in two steps, within bins of w thin enough that a
    vertex moves at most ``_BIN_SHIFT_MM`` along x within one (up to ``_MAX_BINS``; thicker
    bins only widen the candidate ranges). Each segment's x extent over
    the bin's w range gives, through its running maximum and its reversed running minimum,
    for any x interval one index range holding every segment that can meet it (a cut's path
    runs along the sweep, so the ranges stay short). First a guess: the few segments around
    the first that reaches the point's x; its distance r bounds the true one. Then every
    segment that can meet [x - r, x + r] is tested. (Guessing by vertex index, interpolated
    between ``lo`` and ``hi``, misses where rulings fan: the two are then spaced unlike each
    other, and a skewed piece was measured 14 mm off where it was 0.4 mm.)
    """
    n = len(lo)
    m = _SEARCH_SEGMENTS
    j = np.zeros(len(q), np.int64)
    tj = np.zeros(len(q))
    f = np.zeros((len(q), 2))
    d2 = np.full(len(q), np.inf)
    if n < 2:  # a single point, no segment: its distance, counted on the waste side
        return np.linalg.norm(q - ((1 - w[:, None]) * lo[:1] + w[:, None] * hi[:1]), axis=1)
    shift = float(np.max(np.abs(hi[:, 0] - lo[:, 0])))
    bins = int(np.clip(np.ceil(shift / _BIN_SHIFT_MM), 1, _MAX_BINS))
    which = np.minimum((w * bins).astype(int), bins - 1)
    for b in np.unique(which):
        idx = np.flatnonzero(which == b)
        x0 = (1 - b / bins) * lo[:, 0] + (b / bins) * hi[:, 0]
        x1 = (1 - (b + 1) / bins) * lo[:, 0] + ((b + 1) / bins) * hi[:, 0]
        ends = np.column_stack([x0[:-1], x0[1:], x1[:-1], x1[1:]])
        top = np.maximum.accumulate(ends.max(axis=1))
        bottom = np.minimum.accumulate(ends.min(axis=1)[::-1])[::-1]
        qx = q[idx, 0]
        # the guess: the segments around the first whose x extent reaches the point's x
        near = np.searchsorted(top, qx, side="left")
        first = np.clip(near - m, 0, max(n - 2 - 2 * m, 0))
        j[idx], tj[idx], f[idx], d2[idx] = _in_window(lo, hi, w[idx], q[idx], first, m)
        r = np.sqrt(d2[idx]) * (1.0 + 1e-9) + 1e-9
        k0 = np.searchsorted(top, qx - r, side="left")
        k1 = np.searchsorted(bottom, qx + r, side="right")
        count = np.maximum(k1 - k0, 0)
        for c0 in range(0, len(idx), _CANDIDATE_CHUNK):
            part = slice(c0, c0 + _CANDIDATE_CHUNK)
            cnt = count[part]
            if not cnt.any():
                continue
            owner = np.repeat(np.arange(len(cnt)), cnt)
            seg = (
                np.repeat(k0[part], cnt)
                + np.arange(len(owner))
                - np.repeat(np.cumsum(cnt) - cnt, cnt)
            )
            rows = idx[part][owner]
            t_c, f_c, d2_c = _on_segments(lo, hi, w[rows], q[rows], seg)
            # the nearest candidate of each point: the first of its run, ordered by distance
            order = np.lexsort((d2_c, owner))
            head = order[np.r_[True, owner[order][1:] != owner[order][:-1]]]
            at = rows[head]
            better = d2_c[head] < d2[at]
            at, head = at[better], head[better]
            j[at], tj[at], f[at], d2[at] = seg[head], t_c[head], f_c[head], d2_c[head]
    wr = w[:, None]

    def point(i: np.ndarray) -> np.ndarray:
        return (1 - wr) * lo[i] + wr * hi[i]

    n_ref = _segment_normal(point(j), point(j + 1))
    before = (tj <= 0.0) & (j > 0)
    after = (tj >= 1.0) & (j < n - 2)
    jb, ja = np.maximum(j - 1, 0), np.minimum(j + 2, n - 1)
    n_ref += np.where(before[:, None], _segment_normal(point(jb), point(j)), 0.0)
    n_ref += np.where(after[:, None], _segment_normal(point(j + 1), point(ja)), 0.0)
    side = np.sum((q - f) * n_ref, axis=1)
    dist = np.sqrt(d2)
    return np.where(side > 0, -dist, dist)


def surface_deviation(
    surface: ReplayedSurface, points: np.ndarray, normals: np.ndarray
) -> np.ndarray:
    """Signed deviation (n,) mm of the replayed cut at target samples.

    Parameters
    ----------
    surface : ReplayedSurface
    points : (n, 3) float, mm, machine frame
        Target samples.
    normals : (n, 3) float, unit, machine frame
        Target normals toward the waste side.

    Returns
    -------
    (n,) float, mm
        + = the cut lies on the waste side of the sample, - = it gouges the part. Samples
        outside the face planes are measured against the nearest face's section.
    """
    p = np.asarray(points, float)
    nrm = np.asarray(normals, float)
    z = surface.z_mm
    j = np.clip(np.searchsorted(z, p[:, 2], side="right") - 1, 0, len(z) - 2)
    w = np.clip((p[:, 2] - z[j]) / (z[j + 1] - z[j]), 0.0, 1.0)
    out = np.empty(len(p))
    for plane in np.unique(j):
        idx = np.flatnonzero(j == plane)
        lo, hi = _subdivide(surface.cut[plane], surface.cut[plane + 1], _MAX_SEGMENT_MM)
        out[idx] = _signed_to_sections(lo, hi, w[idx], p[idx, :2])
    scale = np.linalg.norm(nrm[:, :2], axis=1) / np.maximum(np.linalg.norm(nrm, axis=1), 1e-12)
    return out * scale


def weighted_quantile(values: np.ndarray, weights: np.ndarray, q: float) -> float:
    """The q-quantile of ``values`` (n,) with ``weights`` (n,) >= 0 (unweighted if all zero)."""
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    if len(v) == 0:
        return 0.0
    if w.sum() <= 0:
        w = np.ones_like(v)
    order = np.argsort(v)
    cw = np.cumsum(w[order])
    k = int(np.searchsorted(cw, q * cw[-1], side="left"))
    return float(v[order][min(k, len(v) - 1)])


def replay(
    program: CutProgram, piece: Piece | Block, job: JobProfile, samples, planes: int = 9
) -> ReplayResult:
    """Replay ``program`` on the piece's block and measure the cut against ``samples``.

    Parameters
    ----------
    program : CutProgram
        The program to replay (typically read back from G-code).
    piece : Piece or Block
        Only the block is used (the planned cut is never read).
    job : JobProfile
        Span, kerf, lag constants and the tolerance.
    samples : TargetSamples or alike
        ``points (n, 3)`` mm machine frame, ``normals (n, 3)`` toward the waste, ``weights
        (n,)`` mm^2.
    planes : int
        Section planes across the block.
    """
    block = getattr(piece, "block", piece)
    surface = replay_cut_surface(program, block, job, planes)
    signed = surface_deviation(surface, samples.points, samples.normals)
    weights = np.asarray(samples.weights, float)
    a = np.abs(signed)
    wsum = weights.sum()
    rms = (
        float(np.sqrt(np.sum(weights * a * a) / wsum))
        if wsum > 0
        else float(np.sqrt(np.mean(a * a)))
    )
    return ReplayResult(
        surface=surface,
        signed=signed,
        within=a <= job.tolerance.surface_mm,
        max_abs_mm=float(a.max()) if len(a) else 0.0,
        rms_mm=rms if len(a) else 0.0,
        p95_mm=weighted_quantile(a, weights, 0.95),
        machine_time_s=program.machine_time_s,
        dwell_time_s=program.dwell_time_s,
        left_speed_mm_s=surface.move_speed_mm_s[0],
        right_speed_mm_s=surface.move_speed_mm_s[-1],
    )
