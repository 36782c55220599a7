"""The plan grid: every box that holds a point is among the point's candidates."""

from __future__ import annotations

import numpy as np
import pytest

from wirecut.geometry.plan_grid import PlanGrid


@pytest.mark.parametrize("seed", range(5))
def test_candidates_hold_every_box_that_holds_the_point(seed):
    rng = np.random.default_rng(seed)
    m = 3000
    centre = rng.uniform(0.0, 1000.0, (m, 2))
    half = rng.exponential(6.0, (m, 2))  # mostly small boxes, a few long ones
    lo, hi = centre - half, centre + half
    grid = PlanGrid.covering(lo, hi, np.arange(m) + 100)  # over the boxes' own extent
    assert np.array_equal(grid.lo, lo.min(axis=0))
    pts = rng.uniform(-50.0, 1050.0, (2000, 2))  # some outside every box
    found = {(int(q), int(b)) for qi, it in grid.candidates(pts, chunk=700)
             for q, b in zip(qi, it, strict=True)}  # fmt: skip
    inside = (pts[:, None, :] >= lo[None]) & (pts[:, None, :] <= hi[None])
    truth = {(int(q), int(b) + 100) for q, b in zip(*np.nonzero(inside.all(axis=2)), strict=True)}
    assert truth <= found
    # a candidate shares at least the point's cell with its box: never far from it
    for q, b in found:
        box = b - 100
        gap = np.maximum(np.maximum(lo[box] - pts[q], pts[q] - hi[box]), 0.0)
        assert np.all(gap <= grid.cell + 1e-9)


def test_points_come_in_order():
    lo = np.array([[0.0, 0.0], [5.0, 5.0]])
    hi = np.array([[10.0, 10.0], [20.0, 20.0]])
    grid = PlanGrid.of_boxes(lo, hi, np.array([0, 1]), np.zeros(2), np.array([20.0, 20.0]))
    qi = np.concatenate([q for q, _ in grid.candidates(np.array([[1.0, 1.0], [7.0, 7.0]] * 3))])
    assert np.all(np.diff(qi) >= 0)
