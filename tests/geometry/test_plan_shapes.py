"""Plan triangles as shapely polygons in bulk: the same geometries as shapely's own."""

from __future__ import annotations

import gc

import numpy as np
import shapely

from wirecut.geometry.plan_shapes import collector_paused, triangle_polygons


def test_triangle_polygons_are_shapelys_polygons_point_for_point():
    rng = np.random.default_rng(3)
    tri = rng.normal(size=(500, 3, 2)) * 100.0
    got = triangle_polygons(tri)
    want = shapely.polygons(tri)
    assert got.shape == (500,) and bool(shapely.equals_exact(got, want, 0.0).all())
    assert np.array_equal(shapely.get_coordinates(got), shapely.get_coordinates(want))
    assert triangle_polygons(np.zeros((0, 3, 2))).shape == (0,)
    # the collector is held off inside the block only, and left as it was
    assert gc.isenabled()
    with collector_paused():
        assert not gc.isenabled()
    assert gc.isenabled()
    gc.disable()
    try:
        with collector_paused():
            pass
        assert not gc.isenabled()
    finally:
        gc.enable()
