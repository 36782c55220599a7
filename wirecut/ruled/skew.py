"""Step 3 of the ruled fit: the skew of each ruling (the correspondence of the two faces).

A ruling k is its mid-plane knot ``X_k`` and its skew ``s_k = xR_k - xL_k``. This module finds
seeds for the skews (a scan of straight lines through the target chained by dynamic
programming; the asymptotic directions of local quadratic fits) and refines skews and heights
together by Levenberg-Marquardt (Levenberg 1944, Marquardt 1963) on the sparse normal
equations of an analytic Jacobian. Neighbouring skews stay at most ``CROSSING`` knot spacings
apart: two rulings would cross inside the block at ``|s_{k+1} - s_k| = 2 dX``, and well before
that one block face crawls while the other moves, since between the two rulings the faces
travel ``dX -+ (s_{k+1} - s_k) / 2`` in the same time. ``CROSSING`` keeps the slower face's
share of that travel at least ``FACE_TRAVEL_SHARE``. See :mod:`wirecut.ruled.fit` for how the
steps fit together.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse as sp
from scipy.interpolate import RegularGridInterpolator
from scipy.sparse.linalg import spsolve
from scipy.spatial import cKDTree

from wirecut.ruled.model import RuledCut

__all__ = [
    "local_hessians",
    "skew_seeds",
    "skew_scan",
    "end_bounds",
    "monotone_seed",
    "knot_gaps",
    "skew_solve",
    "ruled_cut",
    "second_difference",
    "MAX_SLOPE",
    "CROSSING",
    "FACE_TRAVEL_SHARE",
]

_SMOOTH = 1e-3  # relative weight of the second-difference smoothing rows
_LM_STEPS = 40
_LM_SETTLED = 1e-3  # stop once a step lowers the cost by less than 0.1 %: the LP that follows
# sets the heights anew, and the skews barely move past this point
_SCAN_CANDIDATES = 61
#: Least share of the faster face's travel along the sweep that the slower face makes between
#: two rulings. The kerf law is known down to a quarter of the cut speed
#: (``wirecut.toolpath.kerf.SLOW_FACE_SHARE``); the margin above it covers what the rise of
#: the surface and the kerf offsets add to one face's path. At 1.95 knot spacings (the rule
#: was only that rulings must not cross) the skewed pieces of a doubly curved panel fanned a
#: face down to 1 % of the other's speed.
FACE_TRAVEL_SHARE = 0.35
#: Largest skew change between neighbouring rulings, in knot spacings (rulings cross at 2):
#: ``(dX - d/2) / (dX + d/2) >= FACE_TRAVEL_SHARE``, about 0.96.
CROSSING = 2.0 * (1.0 - FACE_TRAVEL_SHARE) / (1.0 + FACE_TRAVEL_SHARE)
#: Largest ruling slope |dx/dz|: rulings within 45 degrees of the wire axis.
MAX_SLOPE = 1.0


def ruled_cut(xl, xr, yl, yr, z_left, z_right, m) -> RuledCut:
    """A RuledCut from per-ruling x and y on both faces ((K,) mm each)."""
    return RuledCut(np.column_stack([xl, yl]), np.column_stack([xr, yr]), z_left, z_right, m)


def second_difference(k: int) -> sp.csr_matrix:
    """The (k - 2, k) second-difference operator."""
    if k < 3:
        return sp.csr_matrix((0, k))
    return sp.diags([1.0, -2.0, 1.0], [0, 1, 2], shape=(k - 2, k), format="csr")


def local_hessians(x, y, z, centers, h, z_mid, half_width):
    """Quadratic fits ``y ~ a + b dx + c dz + (p dx^2 + 2 q dx dz + r dz^2) / 2`` over the
    samples within 1.5 h of each centre (all z). Returns p, q, r (1/mm), b (mm/mm), ok."""
    order = np.argsort(x, kind="stable")
    xs = x[order]
    n = len(centers)
    p, q, r, b = (np.zeros(n) for _ in range(4))
    ok = np.zeros(n, bool)
    lo_hi = np.searchsorted(xs, np.column_stack([centers - 1.5 * h, centers + 1.5 * h]))
    # the normal equations of every centre first, then one stacked condition test and one
    # stacked solve (the same LAPACK routines per matrix as one call each, without the
    # per-call overhead)
    at, grams, rhs = [], [], []
    for k, (i0, i1) in enumerate(lo_hi):
        sel = order[i0:i1]
        if len(sel) < 12:
            continue
        if len(sel) > 800:
            sel = sel[:: len(sel) // 800 + 1]
        u = (x[sel] - centers[k]) / h
        v = (z[sel] - z_mid) / half_width
        basis = np.column_stack([np.ones_like(u), u, v, u * u, u * v, v * v])
        at.append(k)
        grams.append(basis.T @ basis)
        rhs.append(basis.T @ y[sel])
    if not at:
        return p, q, r, b, ok
    gram, at = np.array(grams), np.array(at)
    good = np.linalg.cond(gram) <= 1e10  # NaN (a singular matrix) fails too
    if not good.any():
        return p, q, r, b, ok
    coef = np.linalg.solve(gram[good], np.array(rhs)[good][:, :, None])[:, :, 0]
    k = at[good]
    p[k] = 2.0 * coef[:, 3] / h**2
    q[k] = coef[:, 4] / (h * half_width)
    r[k] = 2.0 * coef[:, 5] / half_width**2
    b[k] = coef[:, 1] / h
    ok[k] = True
    return p, q, r, b, ok


def skew_seeds(x, y, z, knots, h, z_mid, half_width) -> tuple[np.ndarray, np.ndarray]:
    """Two seeds of the ruling slope dx/dz per knot: the two asymptotic families of a local
    quadratic fit of y(x, z) (roots m of ``p m^2 + 2 q m + r = 0``), each followed along the
    knots from one of the two roots at the first knot;
    the least-curved direction ``m = -q / p`` where the height field has no asymptotic
    direction (synclastic), 0 where it is flat."""
    p, q, r, _, ok = local_hessians(x, y, z, knots, h, z_mid, half_width)
    hi = np.zeros(len(knots))
    lo = np.zeros(len(knots))
    for k in np.flatnonzero(ok):
        scale = abs(p[k]) + abs(q[k]) + abs(r[k])
        if scale < 1e-9:
            continue
        disc = q[k] ** 2 - p[k] * r[k]
        if disc < 0:
            m = -q[k] / p[k]
            hi[k] = lo[k] = m if abs(m) <= MAX_SLOPE else 0.0
            continue
        big = q[k] + math.copysign(math.sqrt(disc), q[k])
        roots = []
        if abs(big) > 1e-9 * scale:
            roots.append(-r[k] / big)  # the small root, stable as p -> 0
        if abs(p[k]) > 1e-9 * scale:
            roots.append(-big / p[k])
        roots = [m for m in roots if abs(m) <= MAX_SLOPE]
        if roots:
            hi[k], lo[k] = max(roots), min(roots)
    if ok.any() and not ok.all():  # knots without samples take the nearest fitted knot's seed
        good = np.flatnonzero(ok)
        near = good[np.clip(np.searchsorted(good, np.arange(len(knots))), 0, len(good) - 1)]
        prev = good[np.clip(np.searchsorted(good, np.arange(len(knots))) - 1, 0, len(good) - 1)]
        idx = np.arange(len(knots))
        near = np.where(np.abs(prev - idx) < np.abs(near - idx), prev, near)
        hi, lo = hi[near], lo[near]
    return _track(hi, lo, hi[0]), _track(hi, lo, lo[0])


def _track(hi: np.ndarray, lo: np.ndarray, start: float) -> np.ndarray:
    """Follow one family of roots along the knots: at each knot the root nearer the last."""
    out = np.empty(len(hi))
    last = start
    for k in range(len(hi)):
        last = hi[k] if abs(hi[k] - last) <= abs(lo[k] - last) else lo[k]
        out[k] = last
    return out


def skew_scan(x, y, z, grad, knots, z_left, z_right, reach) -> np.ndarray:
    """A skew seed (K,) mm by scanning candidate rulings through each knot.

    The target is resampled on a regular (x, z) grid (a quarter knot spacing by 1/32 of the
    width): each node takes its nearest sample, moved to the node along the sample's tangent
    plane (``grad`` (n, 2): dy/dx, dy/dz), and nodes farther than two cells from any sample
    are left empty. For each knot and each candidate skew, the grid (bilinear) is read at 13
    points along the candidate line; the line's cost is the rms of those heights about their
    least-squares line in t (0 for a straight line lying in the surface). A Viterbi pass
    (dynamic programming over the knots) picks one candidate per knot with neighbouring skews
    less than two knot spacings apart (rulings k and k + 1 cross inside the block once
    ``|s_{k+1} - s_k| >= 2 dX``), and the tiny cost on skew changes keeps it on one ruling
    family of a doubly ruled surface. With knots pinned onto creases, the rule holds per gap.
    """
    k = len(knots)
    spacing = knot_gaps(knots)
    gaps = np.broadcast_to(spacing, (max(k - 1, 0),))
    dx = float(np.median(gaps)) if np.ndim(spacing) else float(spacing)  # were some pinned
    if reach <= 0 or len(x) < 12:
        return np.zeros(k)
    step = min(dx / 2.0, reach / 10.0)
    cand = np.arange(-reach, reach + 0.5 * step, step)
    if len(cand) > _SCAN_CANDIDATES:
        cand = np.linspace(-reach, reach, _SCAN_CANDIDATES)
    cell_x = max(dx / 4.0, (float(x.max()) - float(x.min())) / 1000.0, 1e-3)
    gx = np.arange(float(x.min()), float(x.max()) + cell_x, cell_x)
    gz = np.linspace(z_left, z_right, 33)
    cell = max(cell_x, float(gz[1] - gz[0]))
    tree = cKDTree(np.column_stack([x, z]))
    nx, nz = np.meshgrid(gx, gz, indexing="ij")
    dist, near = tree.query(np.column_stack([nx.ravel(), nz.ravel()]))
    val = y[near] + grad[near, 0] * (nx.ravel() - x[near]) + grad[near, 1] * (nz.ravel() - z[near])
    val = np.where(dist <= 2.0 * cell, val, np.nan).reshape(nx.shape)
    grid = RegularGridInterpolator((gx, gz), val, bounds_error=False, fill_value=np.nan)
    t = np.linspace(0.0, 1.0, 13)
    xs = knots[:, None, None] + (t[None, None, :] - 0.5) * cand[None, :, None]
    zs = np.broadcast_to(z_left + t * (z_right - z_left), xs.shape)
    ys = grid(np.column_stack([xs.ravel(), zs.ravel()])).reshape(xs.shape)
    ok = np.isfinite(ys)
    cnt = ok.sum(axis=2)
    tt = np.broadcast_to(t, xs.shape)
    w = ok.astype(float)
    yv = np.where(ok, ys, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mt = (w * tt).sum(2) / cnt
        my = (yv * w).sum(2) / cnt
        ct = (w * (tt - mt[..., None]) ** 2).sum(2)
        slope = (w * (tt - mt[..., None]) * (yv - my[..., None])).sum(2) / ct
        res = w * (yv - my[..., None] - slope[..., None] * (tt - mt[..., None]))
        cost = np.sqrt((res**2).sum(2) / cnt)
    cost = np.where(cnt >= 7, cost, np.inf)
    cost = np.where(np.isfinite(cost).any(axis=1, keepdims=True), cost, 0.0)
    jump = np.abs(cand[:, None] - cand[None, :])
    least = float(cand[1] - cand[0]) if len(cand) > 1 else 0.0
    trans_of = {}
    total = cost[0].copy()
    back = np.zeros((k, len(cand)), int)
    for i in range(1, k):
        allowed = max(CROSSING * float(gaps[i - 1]), least) + 1e-9
        if allowed not in trans_of:
            trans_of[allowed] = np.where(jump <= allowed, 1e-6 * jump, np.inf)
        options = total[:, None] + trans_of[allowed]
        back[i] = np.argmin(options, axis=0)
        total = options[back[i], np.arange(len(cand))] + cost[i]
    pick = np.empty(k, int)
    pick[-1] = int(np.argmin(total))
    for i in range(k - 1, 0, -1):
        pick[i - 1] = back[i, pick[i]]
    return cand[pick]


def _end_interval(a: np.ndarray, b: np.ndarray) -> tuple[float, float]:
    """The interval of s with ``a_i s <= b_i`` for all i (empty -> its midpoint, twice)."""
    pos, neg = a > 1e-12, a < -1e-12
    upper = float(np.min(b[pos] / a[pos])) if pos.any() else np.inf
    lower = float(np.max(b[neg] / a[neg])) if neg.any() else -np.inf
    if lower > upper:
        mid = 0.5 * (lower + upper)
        return mid, mid
    return lower, upper


def end_bounds(x, t, knots) -> tuple[np.ndarray, np.ndarray]:
    """Skew bounds (K,) keeping every sample covered: the first ruling
    ``knots[0] + (t - 1/2) s_0`` left of it and the last right of it, at the sample's t."""
    k = len(knots)
    lb, ub = np.full(k, -np.inf), np.full(k, np.inf)
    a = t - 0.5
    lb[0], ub[0] = _end_interval(a, x - knots[0])
    lb[-1], ub[-1] = _end_interval(-a, knots[-1] - x)
    return lb, ub


def knot_gaps(knots: np.ndarray) -> float | np.ndarray:
    """The knots' spacing (mm): one float for evenly spaced knots (the first gap, as
    ``numpy.linspace`` made them), else the (K - 1,) gaps (knots pinned onto creases)."""
    kn = np.asarray(knots, float)
    if len(kn) < 2:
        return 0.0
    gaps = np.diff(kn)
    if np.allclose(gaps, gaps[0], rtol=1e-9, atol=0.0):
        return float(kn[1] - kn[0])
    return gaps


def monotone_seed(s: np.ndarray, dx, lb: np.ndarray, ub: np.ndarray) -> np.ndarray:
    """Clip a skew seed into [lb, ub] with neighbouring skews at most ``CROSSING`` times their
    knots' gap apart (rulings that do not cross, faces that do not crawl). ``dx`` is the gap
    (mm), one for all, or (K - 1,) per pair of neighbours (knots pinned onto creases).

    The bounds are first tightened by what the neighbour rule carries along the rulings (a
    tight bound at an end ruling limits the rulings next to it), so that the clipping passes
    that follow always find a value within both the bounds and the rule."""
    gap = CROSSING * np.broadcast_to(np.asarray(dx, float), (max(len(s) - 1, 0),))
    lo = np.array(lb, float)
    hi = np.array(ub, float)
    for k in range(1, len(s)):
        g = gap[k - 1]
        lo[k], hi[k] = max(lo[k], lo[k - 1] - g), min(hi[k], hi[k - 1] + g)
    for k in range(len(s) - 2, -1, -1):
        g = gap[k]
        lo[k], hi[k] = max(lo[k], lo[k + 1] - g), min(hi[k], hi[k + 1] + g)
    if np.any(lo > hi):  # bounds no skew can meet together: the plainest that meets them
        return np.clip(np.zeros(len(s)), lb, ub)
    s = np.clip(s, lo, hi)
    for k in range(1, len(s)):
        g = gap[k - 1]
        s[k] = min(max(s[k], s[k - 1] - g, lo[k]), s[k - 1] + g, hi[k])
    for k in range(len(s) - 2, -1, -1):
        g = gap[k]
        s[k] = min(max(s[k], s[k + 1] - g, lo[k]), s[k + 1] + g, hi[k])
    return s


def skew_solve(pts, c, knots, s0, y0, z_left, z_right, m, lb, ub):
    """Joint least squares in (skew, heights): Levenberg-Marquardt (Levenberg 1944, Marquardt
    1963) on the sparse normal equations of an analytic Jacobian. Bounds and the rule that
    rulings never cross (the rulings k and k + 1 cross inside the block once
    ``|s_{k+1} - s_k| >= 2 dX``) are kept by projecting every trial skew with
    :func:`monotone_seed` (neighbours within ``CROSSING`` dX), so the cost is always that of
    a cut the machine can make. Knots evenly spaced, or pinned onto creases (the rule then
    holds per gap)."""
    k = len(knots)
    x, yt, z = pts[:, 0], pts[:, 1], pts[:, 2]
    d2 = second_difference(k)
    lam = 1e-2 * _SMOOTH * math.sqrt(float((c * c).sum()) / max(k, 1))
    reg = lam * sp.block_diag([d2, d2, d2]).tocsr()
    n = len(x)
    dx = knot_gaps(knots)

    def project(v):
        return np.concatenate([monotone_seed(v[:k].copy(), dx, lb, ub), v[k:]])

    def parts(v):
        s, yl, yr = v[:k], v[k : 2 * k], v[2 * k :]
        cut = ruled_cut(knots - s / 2, knots + s / 2, yl, yr, z_left, z_right, m)
        j, w, t, _ = cut.strip_of(x, z)
        y0_ = (1 - t) * yl[j] + t * yr[j]
        y1_ = (1 - t) * yl[j + 1] + t * yr[j + 1]
        x0 = knots[j] + (t - 0.5) * s[j]
        x1 = knots[j + 1] + (t - 0.5) * s[j + 1]
        g = (y1_ - y0_) / np.where(x1 > x0, x1 - x0, 1.0)
        return j, w, t, g, (1 - w) * y0_ + w * y1_

    def fun(v):
        # the parts are kept: the Jacobian is always asked at the last accepted point
        part = parts(v)
        return np.concatenate([c * (part[-1] - yt), reg @ v]), part

    indptr = np.arange(0, 6 * n + 1, 6)

    def jac(v, part):
        j, w, t, g, _ = part
        cols = np.column_stack([j, j + 1, k + j, 2 * k + j, k + j + 1, 2 * k + j + 1]).ravel()
        tm = t - 0.5
        vals = np.column_stack(
            [
                -(1 - w) * g * tm,
                -w * g * tm,
                (1 - w) * (1 - t),
                (1 - w) * t,
                w * (1 - t),
                w * t,
            ]
        )
        data = sp.csr_matrix(((vals * c[:, None]).ravel(), cols, indptr), shape=(n, 3 * k))
        return sp.vstack([data, reg]).tocsr()

    v = project(np.concatenate([s0, y0]))
    r, part = fun(v)
    cost = float(r @ r)
    mu = 1e-3
    evals = 1
    for _ in range(_LM_STEPS):
        jm = jac(v, part)
        jtj = (jm.T @ jm).tocsc()
        grad = jm.T @ r
        diag = jtj.diagonal() + 1e-12
        improved = False
        while mu < 1e8:
            step = spsolve(jtj + sp.diags(mu * diag), -grad)
            trial = project(v + step)
            rt, pt = fun(trial)
            evals += 1
            ct = float(rt @ rt)
            if ct < cost:
                improved = True
                shrink = (cost - ct) / max(cost, 1e-300)
                v, r, cost, part = trial, rt, ct, pt
                mu = max(mu / 10.0, 1e-9)
                break
            mu *= 10.0
        if not improved or shrink < _LM_SETTLED or cost < 1e-24:
            break
    return v[:k], v[k:], evals
