"""The equal-error (min-max) placement of a cut's heights: a sparse LP solved by row generation.

For fixed ruling x-positions the cut height at a sample is ``a_i @ y`` (bilinear strip weights,
see :mod:`wirecut.ruled.fit`), so the largest deviation along the normals is a linear
programme in the 2K heights ``y`` (the min-max positioning used for flank milling of ruled
surfaces, Redonnet, Rubio & Dessein). With one local bound ``e_j`` per strip and a global bound
``E >= e_j``::

    minimize   M E + sum_j e_j          (M = number of strips)
    subject to |ny_i (a_i y - yt_i)| <= e_{strip(i)}     (balanced)
               0 <= ny_i (a_i y - yt_i) <= e_{strip(i)}  (no-gouge)

The global maximum comes first, then every strip's own maximum, which removes the freedom a
pure min-max leaves to strips that do not bind (they would otherwise float anywhere under E and
violate samples the LP did not see).

A min-max optimum is fixed by about as many samples as there are unknowns, so the LP holds
only a working set: the extreme residuals per strip and per slab of t, to start, then after
each solve the samples that break the bound (row generation, the cutting-plane method of
Kelley 1960, "The cutting-plane method for solving convex programs", J. SIAM 8). The model
stays alive between rounds in HiGHS (Huangfu & Hall 2018, "Parallelizing the dual revised
simplex method", Math. Prog. Comp. 10, through the project's own Python interface ``highspy``):
new rows keep the previous basis dual feasible, so each round is a few dual simplex
iterations from where the last one ended instead of a solve from scratch: about three times
faster than a fresh ``scipy.optimize.linprog`` per round on the largest min-max problems of a
10k-triangle plan, and faster still than one ``linprog`` over every sample
(``bench/bench_minimax.py``).
"""

from __future__ import annotations

import os
import sys

import numpy as np
import scipy.sparse as sp

from wirecut.config import Policy

__all__ = ["T_SLABS", "cells", "extremes_per_cell", "equal_error"]

T_SLABS = 8  # slabs of t per strip in the starting working set
_ROUNDS = 12
_ADD = 400  # besides the per-cell extremes, the worst violators added per round

_announced = False


def _solver():
    """A silent HiGHS instance. HiGHS prints its banner on stdout when the first instance of a
    process is made: that one is made with the descriptor pointed at /dev/null, so that the
    CLI's own output (and a ``--json -`` stream) stays clean."""
    global _announced
    import highspy

    if _announced:
        h = highspy.Highs()
    else:
        sys.stdout.flush()
        saved = os.dup(1)
        try:
            with open(os.devnull, "wb") as null:
                os.dup2(null.fileno(), 1)
                h = highspy.Highs()
        finally:
            os.dup2(saved, 1)
            os.close(saved)
        _announced = True
    h.setOptionValue("output_flag", False)
    # the models are small and re-solved from a warm basis after each round of new rows:
    # presolve only costs time there (about 15 % of the solves of a 10k-triangle plan)
    h.setOptionValue("presolve", "off")
    return h


def cells(strip: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Cell index (strip, slab of t) of each sample: ``strip * T_SLABS + slab``."""
    slab = np.clip((np.asarray(t) * T_SLABS).astype(int), 0, T_SLABS - 1)
    return np.asarray(strip) * T_SLABS + slab


def extremes_per_cell(cell: np.ndarray, r: np.ndarray, among: np.ndarray) -> np.ndarray:
    """Indices (into the full arrays) of the min and max of r per cell, over ``among``."""
    idx = np.flatnonzero(among)
    if len(idx) == 0:
        return idx
    order = idx[np.lexsort((r[idx], cell[idx]))]
    cs = cell[order]
    starts = np.flatnonzero(np.r_[True, cs[1:] != cs[:-1]])
    ends = np.r_[starts[1:] - 1, len(order) - 1]
    return np.unique(np.concatenate([order[starts], order[ends]]))


def equal_error(
    a: sp.csr_matrix,
    yt: np.ndarray,
    ny: np.ndarray,
    cell: np.ndarray,
    y0: np.ndarray,
    policy: Policy,
    tol: float,
) -> tuple[np.ndarray, float, int]:
    """Heights with the least largest deviation. Returns (y (2K,) mm, E mm, rounds).

    Parameters
    ----------
    a : (n, 2K) sparse
        Cut height at each sample = ``a @ y``.
    yt : (n,) float, mm
        Target heights.
    ny : (n,) float
        Normal y components (deviation along the normal = ``ny (a y - yt)``).
    cell : (n,) int
        :func:`cells` of each sample.
    y0 : (2K,) float, mm
        Start heights (least squares): the box the heights may move in is centred on them.
    policy : Policy
        Balanced or no-gouge.
    tol : float, mm
        Surface tolerance: sets the slack a sample may exceed the bound by.
    """
    import highspy

    inf = highspy.kHighsInf
    n, nv = a.shape
    if n == 0:
        return y0, 0.0, 0
    strips = cell // T_SLABS
    ns = int(strips.max()) + 1
    used = np.asarray(abs(a).sum(axis=0)).ravel() > 0
    r0 = ny * (a @ y0 - yt)
    spread = float(np.abs(r0).max())
    box = 4.0 * spread + 2.0 * tol + 1.0
    h = _solver()
    ncol = nv + ns + 1
    h.addVars(
        ncol,
        np.concatenate([np.where(used, y0 - box, y0), np.zeros(ns + 1)]),
        np.concatenate([np.where(used, y0 + box, y0), np.full(ns + 1, inf)]),
    )
    cost = np.concatenate([np.zeros(nv), np.ones(ns), [float(ns)]])
    h.changeColsCost(ncol, np.arange(ncol, dtype=np.int32), cost)
    # e_j - E <= 0
    h.addRows(
        ns,
        np.full(ns, -inf),
        np.zeros(ns),
        2 * ns,
        np.arange(0, 2 * ns, 2, dtype=np.int32),
        np.column_stack([nv + np.arange(ns), np.full(ns, nv + ns)]).ravel().astype(np.int32),
        np.tile([1.0, -1.0], ns),
    )
    aw = (sp.diags(ny) @ a).tocsr()
    bw = ny * yt
    held = np.zeros(n, bool)

    def add(rows: np.ndarray) -> None:
        rows = rows[~held[rows]]
        if len(rows) == 0:
            return
        held[rows] = True
        sub = aw[rows]
        ip = sub.indptr
        per = np.diff(ip)
        start = np.concatenate([[0], np.cumsum(per + 1)[:-1]]).astype(np.int32)
        nnz = int(ip[-1]) + len(rows)
        ind = np.empty(nnz, np.int32)
        val = np.empty(nnz)
        pos = np.repeat(start - ip[:-1], per) + np.arange(ip[-1])
        ind[pos], val[pos] = sub.indices, sub.data
        last = start + per
        ind[last], val[last] = nv + strips[rows], -1.0
        m, b = len(rows), bw[rows]
        # excess: a y - e_s <= b
        h.addRows(m, np.full(m, -inf), b, nnz, start, ind, val)
        if policy is Policy.NO_GOUGE:
            # no gouge: a y >= b
            keep = np.ones(nnz, bool)
            keep[last] = False
            h.addRows(m, b, np.full(m, inf), nnz - m, start - np.arange(m, dtype=np.int32),
                      ind[keep], val[keep])  # fmt: skip
        else:
            # gouge: -(a y - b) <= e_s, i.e. a y + e_s >= b
            val2 = val.copy()
            val2[last] = 1.0
            h.addRows(m, b, np.full(m, inf), nnz, start, ind, val2)

    add(extremes_per_cell(cell, r0, np.ones(n, bool)))
    y, eps = y0, spread
    slack = 1e-7 + 1e-4 * tol
    rounds = 0
    while rounds < _ROUNDS:
        rounds += 1
        h.run()
        if h.getModelStatus() != highspy.HighsModelStatus.kOptimal:
            break
        x = np.asarray(h.getSolution().col_value)
        y, local, eps = x[:nv], x[nv : nv + ns], float(x[-1])
        r = ny * (a @ y - yt)
        limit = local[strips] + slack
        if policy is Policy.NO_GOUGE:
            bad = (r > limit) | (r < -slack)
            over = np.maximum(r - limit, -r)
        else:
            bad = np.abs(r) > limit
            over = np.abs(r) - limit
        if not bad.any():
            break
        worst = np.flatnonzero(bad)[np.argsort(-over[bad], kind="stable")[:_ADD]]
        add(np.union1d(extremes_per_cell(cell, r, bad), worst))
    return y, eps, rounds
