"""Fit a ruled cut to the target samples of one piece.

The target is a height field y(x, z) over the machine (x, z) plane, seen from the waste side.
The cut has K rulings; ruling k joins ``(xL_k, yL_k, z_left)`` to ``(xR_k, yR_k, z_right)``
and its mid-plane crossing is the knot ``X_k = (xL_k + xR_k) / 2``, spaced evenly along the
sweep. For fixed x-positions the cut height at a sample is linear in the 2K unknown heights
(bilinear strip weights), which gives three steps:

1. **Least squares start** (Chen & Pottmann 1999, "Approximation by ruled surfaces", J. Comput.
   Appl. Math. 102): vertical rulings (``xL = xR = X``), heights from the sparse normal
   equations of the area-weighted normal residuals, with a faint second-difference smoothing
   so strips without samples follow their neighbours.
2. **Equal-error placement** (the min-max positioning used for flank milling of ruled
   surfaces, Redonnet, Rubio & Dessein): a sparse LP in the 2K heights and a bound eps,
   solved by row generation in a live HiGHS model (:mod:`wirecut.ruled.minimax`).
   ``balanced`` minimizes max |deviation|; ``no-gouge`` keeps every deviation >= 0 and
   minimizes the largest excess.
3. **Correspondence**: the skew ``s_k = xR_k - xL_k`` of each ruling (mid-plane knot fixed)
   is optimized jointly with the heights by Levenberg-Marquardt on the sparse normal
   equations of an analytic Jacobian (a sample depends only on the two rulings of its
   strip). Seeds, the best by least-squares cost of: vertical rulings; a scan of candidate
   lines through each knot, the straightest in the target, chained by dynamic programming;
   the two asymptotic families of a local quadratic fit of the height field (the directions
   along which its Hessian vanishes). Slopes are limited to |dx/dz| <= 1 (rulings within 45
   degrees of the wire axis); every trial is projected onto ``|s_{k+1} - s_k| <= 0.96 dX``
   (``skew.CROSSING``) so rulings never cross inside the block and neither face crawls, and
   the end rulings keep every sample covered. Step 2 is then run
   again and the result kept only when it lowers the max deviation (the excess for
   no-gouge) without losing coverage. Step 3 is skipped when steps 1-2 are already within
   10 % of the tolerance or no seeded skew beats vertical rulings by 2 % in cost. The seeds
   and the solver live in :mod:`wirecut.ruled.skew`.

Ruling spacing: the chord between two rulings of a section of curvature kappa sags by
``kappa H^2 / 8``; ``H = sqrt(8 * 0.1 tol / kappa)`` keeps that at 10 % of the tolerance,
clamped to 2..100 mm, with kappa the 95th percentile of the section curvature ``|y_xx|``
of local quadratic fits of the samples (:func:`estimate_sweep_curvature`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.linalg import LinAlgError, cho_solve_banded, cholesky_banded

from wirecut.config import Policy, ToleranceSpec
from wirecut.errors import JobError
from wirecut.ruled.deviation import DeviationReport, evaluate_cut, signed_deviation
from wirecut.ruled.minimax import cells, equal_error
from wirecut.ruled.model import RuledCut
from wirecut.ruled.sampling import TargetSamples
from wirecut.ruled.skew import (
    CROSSING,
    MAX_SLOPE,
    end_bounds,
    knot_gaps,
    local_hessians,
    monotone_seed,
    ruled_cut,
    second_difference,
    skew_scan,
    skew_seeds,
    skew_solve,
)

__all__ = ["RuledFit", "fit_cut", "estimate_sweep_curvature", "ruling_spacing_for", "pinned_knots"]

_SMOOTH = 1e-3  # relative weight of the second-difference smoothing rows
_MAX_LSQ_SAMPLES = 8_000
_GOOD_ENOUGH = 0.1  # step 3 is skipped when steps 1-2 are already within 10 % of tol
_SEED_GAIN = 0.98  # a seeded skew must lower the least-squares cost by 2 % to run step 3


@dataclass(frozen=True)
class RuledFit:
    """A fitted cut and how well it meets the target.

    Attributes
    ----------
    cut : RuledCut
        The cut, machine frame.
    report : DeviationReport
        Deviation of the cut from the samples it was fitted to.
    n_rulings : int
        Number of rulings K.
    objective : float, mm
        The LP bound eps: max |deviation| (balanced) or max excess (no-gouge), linearized.
    iterations : int
        LP rounds plus least-squares evaluations spent.
    ruling_spacing_mm : float
        Knot spacing H along the sweep, mm.
    skewed : bool
        True when the correspondence step (3) was kept, or oblique creases fixed some skews.
    samples : TargetSamples or None
        The samples the report refers to (same order as ``report.signed``).
    """

    cut: RuledCut
    report: DeviationReport
    n_rulings: int
    objective: float
    iterations: int
    ruling_spacing_mm: float = 0.0
    skewed: bool = False
    samples: TargetSamples | None = None


def estimate_sweep_curvature(points: np.ndarray, window_mm: float | None = None) -> float:
    """95th percentile of the curvature (1/mm) of the sections z = const of a height field.

    ``points`` (n, 3) mm machine frame. A quadratic in (x, z) is fitted to the samples within
    1.5 windows (``window_mm``, default 1/30 of the x extent, at least 10 mm) of centres half a
    window apart; the section curvature is ``|y_xx| / (1 + y_x^2)^1.5``. 0 when flat.
    """
    p = np.asarray(points, float)
    if len(p) < 12:
        return 0.0
    x, y, z = p[:, 0], p[:, 1], p[:, 2]
    ex, ez = float(np.ptp(x)), float(np.ptp(z))
    if ex <= 0:
        return 0.0
    win = float(window_mm) if window_mm else max(ex / 30.0, 10.0)
    centers = np.arange(x.min() + 0.5 * win, x.max(), 0.5 * win)
    if len(centers) == 0:
        centers = np.array([0.5 * (x.min() + x.max())])
    zm = 0.5 * (z.min() + z.max())
    pp, _, _, b, ok = local_hessians(x, y, z, centers, win, zm, max(0.5 * ez, 1.0))
    if not ok.any():
        return 0.0
    k = np.abs(pp[ok]) / (1.0 + b[ok] ** 2) ** 1.5
    return float(np.percentile(k, 95))


def pinned_knots(knots: np.ndarray, at: np.ndarray, must: np.ndarray | None = None) -> np.ndarray:
    """Evenly spaced ``knots`` (k,) mm with a knot on each position of ``at`` (mm) that lies
    strictly inside them: the nearest inner knot moved onto it while that keeps both its gaps
    at least half the spacing and no other position has taken it, else a knot added there,
    one at most per gap of the spacing (the two corners of a step's wall, 10 mm apart between
    knots 28 mm apart, each get one; the many short creases of a noisy mesh do not multiply
    the knots). The positions in ``must`` come first and always get a knot (the oblique
    creases, whose rulings' skews are fixed there).
    A section with a corner (the target's crease) between two knots is cut off by their
    chord, by about the corner's offset from the nearer knot times the slope change over two;
    on the corner it is followed exactly. The result may hold more knots than ``knots``, and
    uneven gaps: the skew limits are set per gap (:func:`wirecut.ruled.skew.monotone_seed`),
    so that close rulings stay close to parallel and never cross."""
    out = np.array(knots, float)
    k = len(out)
    if k < 3:
        return out
    dx = float(out[1] - out[0])
    lo, hi = float(out[0]), float(out[-1])
    eps = 1e-6 * dx
    taken = np.zeros(k, bool)
    added: dict[int, float] = {}  # at most one added knot per gap of the even spacing
    first = np.unique(np.asarray(must if must is not None else [], float))
    rest = np.setdiff1d(np.unique(np.asarray(at, float)), first)
    extra: list[float] = []  # the must-positions beyond one per gap
    for n, p in enumerate(np.concatenate([first, rest])):
        if not lo + eps < p < hi - eps:
            continue
        i = int(round((p - lo) / dx))
        near = [j for j in (i - 1, i, i + 1) if 0 <= j < k and abs(out[j] - p) <= eps]
        if near:  # a knot there already: it stays, exactly there
            taken[near] = True
            out[near] = p
            continue
        if 1 <= i <= k - 2 and not taken[i] and out[i - 1] + 0.5 * dx <= p <= out[i + 1] - 0.5 * dx:
            out[i], taken[i] = p, True
            continue
        gap = min(int((p - lo) // dx), k - 2)
        if gap not in added:  # more creases within one spacing (a noisy mesh's) stay off
            added[gap] = float(p)
        elif n < len(first) and all(abs(q - p) > eps for q in extra):
            extra.append(float(p))
    if added or extra:
        out = np.sort(np.concatenate([out, list(added.values()), extra]))
    return out


def _fixed_skews(knots, gaps, at_x, skew, eps):
    """(lower, upper, start) skews (K,) mm for knots some of which lie on oblique creases
    (``at_x`` (j,) mm, within ``eps`` of a knot) with the creases' ``skew`` (j,) mm: those
    knots' bounds are their skew, the others' unbounded, and the start is the plainest cut
    that holds them (:func:`wirecut.ruled.skew.monotone_seed` from all zeros). Creases whose
    skews no cut without crossing rulings holds together give no bounds and a zero start."""
    k = len(knots)
    lo, hi, free = np.full(k, -np.inf), np.full(k, np.inf), np.zeros(k)
    if len(at_x) == 0:
        return lo, hi, free
    at = np.abs(knots[None, :] - at_x[:, None]).argmin(axis=1)
    hit = np.abs(knots[at] - at_x) <= eps
    lo[at[hit]] = hi[at[hit]] = skew[hit]
    if not hit.any():
        return lo, hi, free
    start = monotone_seed(np.zeros(k), gaps, lo, hi)
    limit = CROSSING * np.broadcast_to(np.asarray(gaps, float), (k - 1,)) + 1e-9
    pinned = np.isfinite(lo)
    if np.any(np.abs(np.diff(start)) > limit) or np.any(np.abs(start - lo)[pinned] > 1e-9):
        return np.full(k, -np.inf), np.full(k, np.inf), free
    return lo, hi, start


def ruling_spacing_for(tolerance_mm: float, sweep_curvature_per_mm: float) -> float:
    """Knot spacing H (mm) whose chord sag ``kappa H^2 / 8`` is 10 % of the tolerance,
    clamped to 2..100 mm."""
    kappa = max(float(sweep_curvature_per_mm), 1e-12)
    return float(np.clip(math.sqrt(8.0 * 0.1 * float(tolerance_mm) / kappa), 2.0, 100.0))


# --------------------------------------------------------------------------- the linear model


def _design(
    cut: RuledCut, x: np.ndarray, z: np.ndarray, located=None
) -> tuple[sp.csr_matrix, np.ndarray, tuple[np.ndarray, np.ndarray]]:
    """Sparse (n, 2K) matrix A with cut height = A @ [yL, yR], the inside mask, and A's
    entries as (columns (n, 4) int, values (n, 4)): each sample's bilinear weights on the
    rulings j and j + 1 at both faces. ``located``: ``cut.strip_of(x, z)`` when the caller
    has it."""
    j, w, t, inside = cut.strip_of(x, z) if located is None else located
    k = cut.n_rulings
    n = len(x)
    rows = np.repeat(np.arange(n), 4)
    cols = np.column_stack([j, k + j, j + 1, k + j + 1])
    vals = np.column_stack([(1 - w) * (1 - t), (1 - w) * t, w * (1 - t), w * t])
    a = sp.csr_matrix((vals.ravel(), (rows, cols.ravel())), shape=(n, 2 * k))
    return a, inside, (cols, vals)


#: Upper bandwidth of the least-squares start's normal equations with the heights
#: interleaved (yL_0, yR_0, yL_1, ...): a sample ties rulings j and j + 1 at both faces
#: (3), the second differences tie j and j + 2 on each face (4).
_BAND = 4


def _interleaved(col: np.ndarray, k: int) -> np.ndarray:
    """Position of the height ``col`` of [yL, yR] (2k,) among the interleaved heights."""
    return np.where(col < k, 2 * col, 2 * (col - k) + 1)


def _second_difference_gram(k: int) -> np.ndarray:
    """Diagonals (3, k) of D2^T D2 (the (k - 2, k) second differences): main, first and
    second (the last entries of the off-diagonals unused)."""
    out = np.zeros((3, k))
    if k < 3:
        return out
    g = second_difference(k).toarray()
    g = g.T @ g
    for off in range(3):
        out[off, : k - off] = np.diagonal(g, off)
    return out


def _least_squares_heights(entries, yt, c, k) -> np.ndarray:
    """Step 1: min sum c_i^2 (a_i y - yt_i)^2 + smoothing, by the normal equations.

    ``entries`` are the design's (columns (n, 4), values (n, 4)) (:func:`_design`). The
    normal equations are banded once the two faces' heights are interleaved (bandwidth
    ``_BAND``), and solved by a banded Cholesky factorisation
    (``scipy.linalg.cholesky_banded``, LAPACK ``pbtrf``): a few bincounts and an O(k)
    solve where a sparse product and LU (``spsolve``) took most of a small fit's start.
    """
    cols, vals = entries
    m = 2 * k
    pos = _interleaved(cols, k)  # (n, 4), increasing along each row
    cw = (c * c)[:, None] * vals  # (n, 4)
    ab = np.zeros((_BAND + 1, m))
    for u in range(4):
        for v in range(u, 4):
            # M[pos_u, pos_v] (pos_u <= pos_v) sits in the upper band form at
            # ab[_BAND + pos_u - pos_v, pos_v]
            ab[_BAND - (v - u)] += np.bincount(pos[:, v], cw[:, u] * vals[:, v], minlength=m)
    lam2 = _SMOOTH**2 * float((c * c).sum()) / max(k, 1)
    gram = lam2 * _second_difference_gram(k)
    for off in range(3):  # each face's heights sit two apart when interleaved
        for face in range(2):
            ab[_BAND - 2 * off, face + 2 * off :: 2] += gram[off, : k - off]
    ab[_BAND] += 1e-12 * lam2
    rhs = np.bincount(pos.ravel(), (cw * yt[:, None]).ravel(), minlength=m)
    back = _interleaved(np.arange(m), k)  # [yL, yR] index -> interleaved position

    def solve(band: np.ndarray, b: np.ndarray) -> np.ndarray | None:
        try:
            u = cholesky_banded(band, lower=False, check_finite=False)
        except (LinAlgError, ValueError):
            return None
        piv = u[_BAND] ** 2
        scale = max(float(band[_BAND].max()), 1e-300)
        if not np.all(np.isfinite(piv)) or piv.min() <= 1e-12 * scale:
            return None  # singular to the rounding: the heights are not tied down
        return cho_solve_banded((u, False), b, check_finite=False)[back]

    y = solve(ab, rhs)
    if y is not None and np.isfinite(y).all():
        return y
    # fewer samples than the smoothing can tie down (two rulings and three samples: no
    # second differences at all), where the ridge above is below the rounding of the
    # normal equations: a ridge that counts, towards the samples' weighted mean height
    # (bilinear weights sum to one, so a level cut at that height leaves the smoothing and
    # the rows' sums alone)
    mean = float(np.sum(c * c * yt) / max(float(np.sum(c * c)), 1e-300))
    mu = 1e-9 * max(float(np.abs(ab[_BAND]).max()), 1e-300)
    ridged = ab.copy()
    ridged[_BAND] += mu
    y = solve(ridged, rhs + mu * mean)
    if y is None:
        raise JobError("the least-squares start of a ruled fit is singular")
    return y


def _merit(report: DeviationReport, policy: Policy) -> float:
    if policy is Policy.NO_GOUGE:
        return report.max_excess_mm + 10.0 * report.max_gouge_mm
    return report.max_abs_mm


# --------------------------------------------------------------------------- the fit


def fit_cut(
    samples: TargetSamples,
    z_left: float,
    z_right: float,
    part_to_machine: np.ndarray,
    tolerance: ToleranceSpec,
    x_range: tuple[float, float] | None = None,
    ruling_spacing_mm: float | None = None,
    *,
    sweep_curvature_per_mm: float | None = None,
    correspondence: bool = True,
    enough_mm: float | None = None,
    skew_hint: tuple[np.ndarray, np.ndarray] | None = None,
    knots_at: np.ndarray | None = None,
    crease_lines: tuple[np.ndarray, np.ndarray] | None = None,
    max_slope: float = MAX_SLOPE,
) -> RuledFit:
    """Fit a ruled cut between the faces ``z_left < z_right`` (mm, machine) to ``samples``.

    Parameters
    ----------
    samples : TargetSamples
        Target samples in this setup's machine frame.
    z_left, z_right : float, mm
        The block's two end faces.
    part_to_machine : (4, 4) float
        Stored on the cut.
    tolerance : ToleranceSpec
        Surface tolerance (mm) and policy (balanced or no-gouge).
    x_range : (float, float), optional
        Sweep extent (mm) the rulings span; default the samples' x extent plus one ruling
        spacing and half the largest seeded ruling skew on each side.
    ruling_spacing_mm : float, optional
        Knot spacing H; default from the sweep curvature (chord sag 10 % of the tolerance).
    sweep_curvature_per_mm : float, optional
        Curvature used for H when ``ruling_spacing_mm`` is not given; default estimated.
    correspondence : bool
        Run step 3 (ruling skew); off gives vertical rulings (a quicker score).
    enough_mm : float, optional
        Skip step 3 when steps 1-2 already stay within this deviation (mm); default 10 % of
        the tolerance. A caller that only asks *whether* a cut within some error exists
        passes that error: the answer is the same, found sooner.
    skew_hint : (x (k,), skew (k,)) mm, optional
        Ruling skew (right face x minus left face x) at machine x positions, from a fit of a
        region holding this one: step 3 also starts from it, and keeps whichever start ends
        better.
    knots_at : (j,) float, mm, optional
        Machine x of creases of the target that run along the wire (a ridge, a valley, the
        foot of a wall across the sweep): a knot is put on each (:func:`pinned_knots`), so
        that the section's corner there is a knot of the cut instead of being cut off by a
        chord.
    crease_lines : ((j,), (j,)) float, mm, optional
        Creases that run along the wire obliquely (:func:`wirecut.geometry.creases.crease_lines`):
        machine x where each crosses the mid-plane, and its skew (x at the right face less x
        at the left). A knot goes on each, as for ``knots_at``, and its ruling keeps that
        skew, so the cut follows the crease from face to face; the rulings between take
        skews that change by at most ``skew.CROSSING`` of their gaps. Lines whose skews no
        such cut can hold together (two creases meeting inside the block) are left out.
    max_slope : float
        Steepest plan slope |skew| / width of any ruling (at most ``skew.MAX_SLOPE``, 45 deg
        from the wire): a ruling's two tower ends lie ``slope * span`` apart along the sweep,
        so a machine bounds it (``MachineSpec.drivable_slope``), and a fit that leans its
        rulings further than any blank can be driven is no fit for that machine.

    Returns
    -------
    RuledFit
    """
    if not z_left < z_right:
        raise JobError(f"fit needs z_left < z_right, got {z_left!r} and {z_right!r}")
    tol = float(tolerance.surface_mm)
    policy = Policy(tolerance.policy)
    slope_cap = float(np.clip(max_slope, 0.0, MAX_SLOPE))
    pts = samples.points
    zin = (pts[:, 2] >= z_left - 1e-9) & (pts[:, 2] <= z_right + 1e-9)
    use = zin & ~samples.undercut
    if use.sum() < 3:
        raise JobError(
            f"no reachable target samples between z = {z_left:g} and {z_right:g} mm to fit"
        )
    up = pts[use]
    width = z_right - z_left
    if ruling_spacing_mm is not None:
        h = float(ruling_spacing_mm)
        if not h > 0:
            raise JobError(f"ruling spacing must be > 0 mm, got {ruling_spacing_mm!r}")
    else:
        kappa = (
            estimate_sweep_curvature(up)
            if sweep_curvature_per_mm is None
            else float(sweep_curvature_per_mm)
        )
        h = ruling_spacing_for(tol, kappa)
    xmin, xmax = float(up[:, 0].min()), float(up[:, 0].max())
    z_mid, half = 0.5 * (z_left + z_right), 0.5 * width
    seeds = None
    if x_range is None:
        margin = h
        if correspondence:
            coarse = np.linspace(xmin, xmax, max(int((xmax - xmin) / h) + 1, 2))
            seeds = skew_seeds(up[:, 0], up[:, 1], up[:, 2], coarse, h, z_mid, half)
            reach = float(np.max(np.abs(np.concatenate(seeds)))) * half
            margin = h + min(reach, 2.0 * width)
        x0, x1 = xmin - margin, xmax + margin
    else:
        x0, x1 = float(x_range[0]), float(x_range[1])
        if not x0 < x1:
            raise JobError(f"x_range must be increasing, got {x_range!r}")
    k = max(int(math.ceil((x1 - x0) / h)) + 1, 2)
    knots = np.linspace(x0, x1, k)
    dx = float(knots[1] - knots[0])
    fixed_x = fixed_s = np.zeros(0)
    if crease_lines is not None and len(crease_lines[0]):
        fixed_x, fixed_s = (np.asarray(v, float) for v in crease_lines)
        inside = (fixed_x > knots[0]) & (fixed_x < knots[-1])
        inside &= np.abs(fixed_s) <= slope_cap * width + 1e-9
        fixed_x, fixed_s = fixed_x[inside], fixed_s[inside]
    ridges = np.asarray(knots_at, float) if knots_at is not None else np.zeros(0)
    if len(ridges) or len(fixed_x):
        knots = pinned_knots(knots, ridges, must=fixed_x)
        k = len(knots)
    h = dx
    gaps = knot_gaps(knots)  # the skew limits between neighbouring rulings
    s_lo, s_hi, s_base = _fixed_skews(knots, gaps, fixed_x, fixed_s, 1e-6 * max(dx, 1e-9))

    ny_t = np.clip(samples.normals[use, 1], 0.05, 1.0)
    c = np.sqrt(np.maximum(samples.weights[use], 0.05 * max(samples.weights[use].mean(), 1e-12)))
    c = c * ny_t
    x, yt, z = up[:, 0], up[:, 1], up[:, 2]

    def linear_fit(s: np.ndarray, y_start: np.ndarray | None):
        flat = ruled_cut(
            knots - s / 2, knots + s / 2, np.zeros(k), np.zeros(k), z_left, z_right, part_to_machine
        )
        located = flat.strip_of(x, z)
        a, _, entries = _design(flat, x, z, located)
        y1 = _least_squares_heights(entries, yt, c, k) if y_start is None else y_start
        j, _, t, _ = located
        cell = cells(j, t)
        y2, eps, rounds = equal_error(a, yt, ny_t, cell, y1, policy, tol)
        cut = ruled_cut(
            knots - s / 2, knots + s / 2, y2[:k], y2[k:], z_left, z_right, part_to_machine
        )
        ny_cut = evaluate_cut(cut, x, z).normal_y
        if np.max(np.abs(ny_cut - ny_t)) > 1e-2 and eps <= 3.0 * tol:
            # the deviation is measured along the cut's normal: solve again with it (not
            # worth it far beyond the tolerance, where it cannot change what is within)
            y2, eps, more = equal_error(a, yt, ny_cut, cell, y2, policy, tol)
            rounds += more
            cut = ruled_cut(
                knots - s / 2, knots + s / 2, y2[:k], y2[k:], z_left, z_right, part_to_machine
            )
        return cut, eps, rounds, y1

    s_zero = np.zeros(k)
    cut, eps, iterations, _ = linear_fit(s_base, None)
    report = signed_deviation(cut, samples, tolerance)
    skewed = bool(np.any(s_base != 0.0))
    enough = _GOOD_ENOUGH * tol if enough_mm is None else float(enough_mm)
    if correspondence and report.max_abs_mm > enough:
        hi, lo = skew_seeds(x, yt, z, knots, h, z_mid, half)
        t_all = (z - z_left) / width
        end_lb, end_ub = end_bounds(x, t_all, knots)
        reach = slope_cap * width
        end_lb, end_ub = np.maximum(end_lb, -reach), np.minimum(end_ub, reach)
        pinned = np.isfinite(s_lo)
        end_lb[pinned], end_ub[pinned] = s_lo[pinned], s_hi[pinned]
        nrm = samples.normals[use]
        grad = -nrm[:, [0, 2]] / np.maximum(nrm[:, 1:2], 0.05)
        scan = skew_scan(x, yt, z, grad, knots, z_left, z_right, reach)
        sub = np.arange(len(x))
        if len(sub) > _MAX_LSQ_SAMPLES:
            sub = np.sort(np.random.default_rng(0).choice(len(x), _MAX_LSQ_SAMPLES, replace=False))
        xs_, ys_, zs_, cs_ = x[sub], yt[sub], z[sub], c[sub]
        tried = []
        for m in (s_base / width, scan / width, hi, lo):
            s = monotone_seed(m * width, gaps, end_lb, end_ub)
            flat = ruled_cut(knots - s / 2, knots + s / 2, s_zero, s_zero, z_left, z_right, None)
            a, _, entries = _design(flat, xs_, zs_)
            y1 = _least_squares_heights(entries, ys_, cs_, k)
            tried.append((float(np.sum((cs_ * (a @ y1 - ys_)) ** 2)), s, y1))
        cost, s, y1 = min(tried[1:], key=lambda e: e[0])
        starts = []  # (skew, heights, refine by the joint solver first)
        if np.any(s) and cost < _SEED_GAIN * tried[0][0]:
            starts.append((s, y1, True))
        if skew_hint is not None:
            # the skew a fit of a larger region found (the split's strip): interpolated onto
            # these knots, a start the seeds above may not reach on this region alone
            hx, hs = (np.asarray(v, float) for v in skew_hint)
            s = monotone_seed(np.interp(knots, hx, hs), gaps, end_lb, end_ub)
            if np.any(s):
                flat = ruled_cut(knots - s / 2, knots + s / 2, s_zero, s_zero, z_left, z_right,
                                 None)  # fmt: skip
                a, _, entries = _design(flat, xs_, zs_)
                y_h = _least_squares_heights(entries, ys_, cs_, k)
                # as it is (so the fit is never worse than that skew) and refined
                starts += [(s, y_h, False), (s.copy(), y_h, True)]
        pts_sub = np.column_stack([x, yt, z])[sub]
        for s, y1, refine in starts:
            if refine:
                s, y1, nfev = skew_solve(
                    pts_sub, c[sub], knots, s, y1, z_left, z_right, part_to_machine, end_lb,
                    end_ub,
                )  # fmt: skip
                iterations += nfev
                # the solver keeps rulings apart by a penalty, which a strong pull can
                # overcome by a little: clip to rulings that cannot cross (else the fit is
                # thrown away)
                s = monotone_seed(s, gaps, end_lb, end_ub)
            cut3, eps3, rounds3, _ = linear_fit(s, y1)
            iterations += rounds3
            if cut3.is_monotone():
                report3 = signed_deviation(cut3, samples, tolerance)
                covered = int(report3.outside.sum()) <= int(report.outside.sum())
                if covered and _merit(report3, policy) < _merit(report, policy):
                    cut, eps, report, skewed = cut3, eps3, report3, True
    return RuledFit(cut, report, k, float(eps), int(iterations), h, skewed, samples)
