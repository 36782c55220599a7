"""The split's prepared surface: a block's top and kept foam against brute force."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon
from shapes_pieces import height_target, quick_job

from wirecut.geometry.frames import DirectionFrame, plan_basis
from wirecut.pieces.region import faces_near_boundary, kept_volume_mm3
from wirecut.pieces.split import _plan_faces, _Surface, prepare_split, split_pieces

UP = np.array([0.0, 0.0, 1.0])


@pytest.fixture(scope="module")
def surface():
    # a wavy height field, 600 x 400 mm on a 10 mm grid (by construction)
    def z(x, y):
        return 80.0 + 30.0 * np.sin(x / 70.0) * np.cos(y / 50.0)

    target = height_target(np.linspace(0, 600, 61), np.linspace(0, 400, 41), z)
    frame = DirectionFrame.from_angle(math.radians(30.0), UP, "below")
    return _Surface(target, quick_job(), frame.rotation)


REGIONS = [
    Polygon([(10, 10), (200, 30), (180, 390), (20, 300)]),
    Polygon([(300, 50), (590, 50), (590, 120), (300, 120)]),
    shapely.box(250.0, 150.0, 251.0, 151.0),  # smaller than one triangle
    Polygon([(0, 0), (600, 400), (590, 400)]),  # a thin diagonal sliver
    shapely.box(700.0, 700.0, 800.0, 800.0),  # off the surface
    shapely.box(100.0, 100.0, 300.0, 200.0),  # along the mesh's grid lines
    # a ring with a slot narrower than a triangle running through it
    shapely.box(50.0, 50.0, 550.0, 350.0)
    .difference(shapely.box(150.0, 150.0, 450.0, 250.0))
    .difference(shapely.box(53.0, 203.0, 547.0, 204.5)),
    shapely.MultiPolygon([shapely.box(0, 0, 40, 40), shapely.box(500, 300, 600, 400)]),
]


def every_polygon(surface):
    e1, e2, _ = plan_basis(UP)
    v = surface.vertices
    return shapely.polygons(np.column_stack([v @ e1, v @ e2])[surface.faces])


@pytest.mark.parametrize("region", REGIONS)
def test_top_is_the_highest_face_that_meets_the_region(surface, region):
    meets = shapely.intersects(region, every_polygon(surface))
    want = float(surface.h[surface.faces[meets]].max()) if meets.any() else surface.base_y
    assert surface.top(region) == want


@pytest.mark.parametrize("region", REGIONS)
def test_kept_foam_equals_the_volume_over_every_face(surface, region):
    every = kept_volume_mm3(
        surface.vertices, surface.faces, surface.up, surface.rotation, surface.base_y, region
    )
    # the same faces summed in the same order: equal to the last bit
    assert surface.kept(region) == every


@pytest.mark.parametrize("region", REGIONS)
def test_faces_off_the_marked_ones_lie_wholly_inside_or_outside(surface, region):
    polys = every_polygon(surface)
    near = faces_near_boundary(surface.prep.plan_grid(), region, len(polys))
    meets = shapely.intersects(shapely.boundary(region), polys)
    assert not np.any(meets & ~near)
    # and the marking stays local: a band about the boundary, not the whole region
    assert near.sum() < max(50, 0.5 * len(polys))


def test_the_plan_view_is_built_once_per_target():
    target = height_target(np.linspace(0, 100, 11), np.linspace(0, 100, 11), lambda x, y: x * 0)
    prepare_split(target)
    first = _plan_faces(target)
    frame = DirectionFrame.from_angle(0.0, UP, "below")
    again = _Surface(target, quick_job(), frame.rotation)
    assert _plan_faces(target) is first and again.fp is first.footprint
    split_pieces(target, None, [frame], quick_job())
    assert _plan_faces(target) is first
    assert again.fp.area == pytest.approx(100.0 * 100.0)
