"""The skew projection: bounds kept, neighbours within CROSSING, faces that do not crawl."""

from __future__ import annotations

import numpy as np
import pytest

from wirecut.ruled.skew import CROSSING, FACE_TRAVEL_SHARE, monotone_seed
from wirecut.toolpath.kerf import SLOW_FACE_SHARE


def test_the_limit_keeps_the_slower_face_above_the_kerf_laws_range():
    dx = 70.0
    d = CROSSING * dx  # the largest skew change allowed between two rulings
    # the faces travel dx - d/2 and dx + d/2 along the sweep between them
    assert (dx - d / 2) / (dx + d / 2) == pytest.approx(FACE_TRAVEL_SHARE)
    assert FACE_TRAVEL_SHARE > SLOW_FACE_SHARE
    assert CROSSING < 2.0  # rulings cross at 2 dx


@pytest.mark.parametrize("seed", range(20))
def test_projection_keeps_bounds_and_neighbours(seed):
    rng = np.random.default_rng(seed)
    k, dx = int(rng.integers(3, 30)), 50.0
    s = rng.normal(0.0, 150.0, k)
    lb, ub = np.full(k, -np.inf), np.full(k, np.inf)
    # tight end bounds, as the end rulings get (they must cover every sample): a bound
    # applied after the neighbour passes used to undo the rule there
    lb[0], ub[0] = -40.0, 40.0
    lb[-1], ub[-1] = -40.0, 40.0
    out = monotone_seed(s.copy(), dx, lb, ub)
    assert np.all(out >= lb - 1e-9) and np.all(out <= ub + 1e-9)
    assert np.all(np.abs(np.diff(out)) <= CROSSING * dx + 1e-9)


def test_projection_leaves_an_allowed_seed_alone():
    dx = 50.0
    s = np.array([0.0, 30.0, 60.0, 40.0, 0.0])
    lb, ub = np.full(5, -100.0), np.full(5, 100.0)
    np.testing.assert_array_equal(monotone_seed(s.copy(), dx, lb, ub), s)
