"""Plan-view region helpers: a caller's shared triangles give what the helpers build alone."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon
from shapes_pieces import grid_mesh

from wirecut.geometry.frames import plan_basis
from wirecut.geometry.plan_grid import PlanGrid
from wirecut.pieces.region import faces_near_boundary, footprint, kept_volume_mm3

UP = np.array([0.0, 0.0, 1.0])


def holed_mesh():
    """A 400 x 300 mm height field with a 100 x 100 mm hole and an upright wall along its
    edge x = 400 (a face seen edge-on in plan), by construction."""
    xs, ys = np.linspace(0.0, 400.0, 21), np.linspace(0.0, 300.0, 16)
    v, f = grid_mesh(xs, ys, lambda x, y: 50.0 + 0.001 * x * y)
    centre = v[f].mean(axis=1)
    hole = (np.abs(centre[:, 0] - 200.0) < 50.0) & (np.abs(centre[:, 1] - 150.0) < 50.0)
    f = f[~hole]
    n = len(v)
    wall = np.array([[400.0, 0.0, 0.0], [400.0, 300.0, 0.0]])
    v = np.vstack([v, wall])
    corner0 = int(np.flatnonzero((v[:n, 0] == 400.0) & (v[:n, 1] == 0.0))[0])
    corner1 = int(np.flatnonzero((v[:n, 0] == 400.0) & (v[:n, 1] == 300.0))[0])
    f = np.vstack([f, [[corner0, n, n + 1], [corner0, n + 1, corner1]]])
    return v, f


def test_footprint_with_a_shared_grid_is_the_same():
    v, f = holed_mesh()
    alone = footprint(v, f, UP)
    e1, e2, _ = plan_basis(UP)
    tri = np.column_stack([v @ e1, v @ e2])[f]
    shared = footprint(
        v, f, UP, grid=PlanGrid.covering(tri.min(axis=1), tri.max(axis=1), np.arange(len(f)))
    )
    assert shapely.equals(alone, shared)
    # 400 x 300 minus the 100 x 100 hole (by construction)
    assert alone.area == pytest.approx(400.0 * 300.0 - 100.0 * 100.0, rel=1e-9)


def test_kept_volume_with_the_faces_near_the_boundary_given_is_the_same():
    v, f = holed_mesh()
    region = Polygon([(30.0, 20.0), (370.0, 35.0), (350.0, 280.0), (45.0, 260.0)])
    rot = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 1.0], [0.0, -1.0, 0.0]])  # part z -> machine y
    base = -10.0
    alone = kept_volume_mm3(v, f, UP, rot, base, region)
    e1, e2, _ = plan_basis(UP)
    tri = np.column_stack([v @ e1, v @ e2])[f]
    grid = PlanGrid.covering(tri.min(axis=1), tri.max(axis=1), np.arange(len(f)))
    near = faces_near_boundary(grid, region, len(f))
    assert 0 < near.sum() < len(f)  # the rest are told by their centroids
    assert kept_volume_mm3(v, f, UP, rot, base, region, near=near) == alone
    # the foam is the integral of (z - base) over the region outside the hole: a midpoint sum
    # on a 1 mm grid (independent of the triangles) agrees within 0.1 %
    x, y = np.meshgrid(np.arange(0.5, 400.0), np.arange(0.5, 300.0), indexing="ij")
    hole = Polygon([(150, 100), (250, 100), (250, 200), (150, 200)])
    keep = shapely.contains_xy(region.difference(hole), x, y)
    expected = float(np.sum((50.0 + 0.001 * x * y - base)[keep]))
    assert alone == pytest.approx(expected, rel=1e-3)


def test_candidate_edges_from_the_edge_table_are_those_of_a_fresh_sort():
    from wirecut.geometry.mesh import edge_table
    from wirecut.pieces.region import candidate_edges

    rng = np.random.default_rng(11)
    n = 12
    g = np.arange(n * n).reshape(n, n)
    a, b, c, d = g[:-1, :-1].ravel(), g[:-1, 1:].ravel(), g[1:, :-1].ravel(), g[1:, 1:].ravel()
    faces = np.concatenate([np.column_stack([a, b, d]), np.column_stack([a, d, c])])
    faces = faces[rng.permutation(len(faces))[: len(faces) - 9]]  # a few holes: boundary
    signed = rng.choice([-1.0, 0.0, 1.0, 2.0], size=len(faces), p=[0.1, 0.05, 0.45, 0.4])
    fresh = candidate_edges(faces, signed)
    shared = candidate_edges(faces, signed, edge_table(faces, n * n))
    assert np.array_equal(fresh, shared) and len(fresh) > 0
    # brute force: boundary edges and edges whose faces differ in sign or lie edge-on
    seen: dict[tuple[int, int], list[float]] = {}
    for f, s in zip(faces, np.sign(signed), strict=True):
        for i in range(3):
            e = tuple(sorted((int(f[i]), int(f[(i + 1) % 3]))))
            seen.setdefault(e, []).append(s)
    want = sorted(e for e, s in seen.items() if len(s) == 1 or min(s) != max(s) or min(s) == 0)
    assert [tuple(e) for e in fresh.tolist()] == want
