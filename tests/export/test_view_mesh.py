"""The 3D view's coarser mesh: vertex clustering keeps the surface whole and the worst values."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from wirecut.export.view_mesh import coarsened


def grid(n: int):
    """An n x n grid over 0..1000 mm, z = 0.0001 x y, two triangles a cell (by construction)."""
    xs = np.linspace(0.0, 1000.0, n)
    X, Y = np.meshgrid(xs, xs, indexing="ij")
    v = np.column_stack([X.ravel(), Y.ravel(), 1e-4 * X.ravel() * Y.ravel()])
    idx = np.arange(n * n).reshape(n, n)
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    return v, np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])


def plan_area(v, f):
    t = v[f][:, :, :2]
    d1, d2 = t[:, 1] - t[:, 0], t[:, 2] - t[:, 0]
    return float(np.abs(0.5 * (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])).sum())


def test_a_small_mesh_is_kept_whole():
    v, f = grid(11)
    val = np.arange(len(v), dtype=float)
    v2, f2, val2 = coarsened(v, f, val, 1000)
    assert np.array_equal(v2[f2], v[f]) and np.array_equal(val2, val)


def test_unused_vertices_are_dropped():
    v, f = grid(11)
    v = np.vstack([v, [[5000.0, 0.0, 0.0]]])
    v2, f2, _ = coarsened(v, f, np.zeros(len(v)), 1000)
    assert len(v2) == len(v) - 1 and f2.max() == len(v2) - 1


@pytest.mark.parametrize("budget", [500, 2000, 8000])
def test_a_large_mesh_fits_the_budget_and_stays_whole(budget):
    v, f = grid(151)  # 45,000 triangles
    v2, f2, _ = coarsened(v, f, np.zeros(len(v)), budget)
    assert 0.5 * budget <= len(f2) <= budget
    # still one sheet: every point of the square 10 % in from its sides lies on a coarse
    # triangle (a copy taking every k-th face would cover about budget / 45,000 of it), and
    # the merged vertices only pull the sides in
    sheet = shapely.union_all(shapely.polygons(v2[f2][:, :, :2]))
    inner = shapely.box(100.0, 100.0, 900.0, 900.0)
    assert inner.difference(sheet).area < 1e-6 * inner.area
    assert plan_area(v2, f2) <= 1e6 * (1 + 1e-9)


def test_the_worst_value_survives_and_unknown_stays_unknown():
    v, f = grid(151)
    val = np.full(len(v), 0.01)
    val[7000] = -0.9  # one bad spot, larger in magnitude than anything else
    val[: 10 * 151] = np.nan  # the first ten rows of vertices (60 mm) unknown
    _, f2, val2 = coarsened(v, f, val, 2000)
    assert np.nanmin(val2) == -0.9
    assert np.isfinite(val2).sum() < len(val2)  # some merged vertices are all unknown
    assert np.nanmax(val2) == 0.01
