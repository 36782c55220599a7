"""The min-max LP by row generation against the same LP solved whole by another front end."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from scipy.optimize import linprog

from wirecut.config import Policy
from wirecut.ruled.minimax import T_SLABS, cells, equal_error


def _problem(seed: int, n: int = 3000, k: int = 12):
    """A random strip model: n samples in k - 1 strips, bilinear weights, noisy heights."""
    rng = np.random.default_rng(seed)
    strip = rng.integers(0, k - 1, n)
    w, t = rng.random(n), rng.random(n)
    rows = np.repeat(np.arange(n), 4)
    cols = np.column_stack([strip, k + strip, strip + 1, k + strip + 1]).ravel()
    vals = np.column_stack([(1 - w) * (1 - t), (1 - w) * t, w * (1 - t), w * t]).ravel()
    a = sp.csr_matrix((vals, (rows, cols)), shape=(n, 2 * k))
    truth = rng.normal(500.0, 20.0, 2 * k)
    yt = a @ truth + rng.normal(0.0, 0.3, n) + 0.5 * np.sin(7.0 * w) * t
    ny = rng.uniform(0.6, 1.0, n)
    return a, yt, ny, cells(strip, t), truth, strip


def _whole_lp(a, yt, ny, strip, policy):
    """The same objective (M E + sum e_j) over every sample at once, scipy's linprog."""
    n, nv = a.shape
    ns = int(strip.max()) + 1
    aw = sp.diags(ny) @ a
    pick = sp.csr_matrix((np.ones(n), (np.arange(n), strip)), shape=(n, ns))
    zero_e = sp.csr_matrix((n, 1))
    cap = sp.hstack([sp.csr_matrix((ns, nv)), sp.eye(ns), -np.ones((ns, 1))])
    over = sp.hstack([aw, -pick, zero_e])
    if policy is Policy.NO_GOUGE:
        under = sp.hstack([-aw, sp.csr_matrix((n, ns + 1))])
    else:
        under = sp.hstack([-aw, -pick, zero_e])
    a_ub = sp.vstack([over, under, cap]).tocsr()
    b = ny * yt
    b_ub = np.concatenate([b, -b, np.zeros(ns)])
    cost = np.concatenate([np.zeros(nv), np.ones(ns), [float(ns)]])
    bounds = [(None, None)] * nv + [(0.0, None)] * (ns + 1)
    res = linprog(cost, A_ub=a_ub, b_ub=b_ub, bounds=bounds, method="highs")
    assert res.status == 0
    return res


@pytest.mark.parametrize("policy", [Policy.BALANCED, Policy.NO_GOUGE])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_row_generation_reaches_the_whole_lp_optimum(seed, policy):
    a, yt, ny, cell, truth, strip = _problem(seed)
    y, eps, rounds = equal_error(a, yt, ny, cell, truth, policy, tol=0.5)
    whole = _whole_lp(a, yt, ny, strip, policy)
    # same optimum (LP objective M E + sum e_j) and same largest bound E
    ns = int(strip.max()) + 1
    r = ny * (a @ y - yt)
    local = np.array([np.abs(r[strip == j]).max() for j in range(ns)])
    if policy is Policy.NO_GOUGE:
        assert r.min() >= -1e-4
        local = np.array([r[strip == j].max() for j in range(ns)])
    assert eps == pytest.approx(whole.x[-1], abs=1e-4)
    assert ns * local.max() + local.sum() == pytest.approx(whole.fun, rel=1e-5, abs=1e-4)
    # it converged within the round limit (a stop at the limit would leave violators)
    assert 1 <= rounds < 12


def test_every_sample_is_within_the_bound_it_returns():
    a, yt, ny, cell, truth, strip = _problem(5, n=6000, k=20)
    y, eps, _ = equal_error(a, yt, ny, cell, truth + 3.0, Policy.BALANCED, tol=0.5)
    assert np.abs(ny * (a @ y - yt)).max() <= eps + 1e-4
    assert cell.max() < 19 * T_SLABS


def test_the_solver_prints_nothing(capfd):
    a, yt, ny, cell, truth, _ = _problem(3, n=500, k=6)
    equal_error(a, yt, ny, cell, truth, Policy.BALANCED, tol=0.5)
    out, _ = capfd.readouterr()
    assert out == ""
