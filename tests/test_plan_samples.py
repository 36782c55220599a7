"""The plan judges each piece on the samples its final fit was made on, when those are the
check samples: the reuse must give exactly what sampling afresh gives."""

from __future__ import annotations

import numpy as np
import shapely

from wirecut.config import default_job
from wirecut.geometry.mesh import target_from_arrays
from wirecut.plan import _piece_samples, _shifted, check_samples, make_plan
from wirecut.ruled.sampling import sample_target


def _dome(n: int = 30):
    x = np.linspace(0.0, 900.0, n + 1)
    y = np.linspace(0.0, 600.0, n + 1)
    gx, gy = np.meshgrid(x, y, indexing="ij")
    gz = 300.0 + 40.0 * np.sin(np.pi * gx / 900.0) * np.sin(np.pi * gy / 600.0)
    v = np.column_stack([gx.ravel(), gy.ravel(), gz.ravel()])
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    a = (i * (n + 1) + j).ravel()
    b, c, d = a + (n + 1), a + (n + 2), a + 1
    f = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    target, _ = target_from_arrays(v, f, default_job())
    return target


def _same(s1, s2) -> None:
    assert len(s1) == len(s2)
    o1 = np.lexsort(np.round(s1.points, 6).T)
    o2 = np.lexsort(np.round(s2.points, 6).T)
    assert np.allclose(s1.points[o1], s2.points[o2], atol=1e-9)
    assert np.allclose(s1.weights[o1], s2.weights[o2])
    assert np.array_equal(s1.face[o1], s2.face[o2])


def test_region_sampling_equals_clipping_the_whole_surface() -> None:
    # only the faces near the region are sampled: the interior samples must be those of the
    # whole surface clipped to the region (the region's own boundary samples come on top)
    # (on the outline itself only the faces that reach inside give samples: see below)
    target = _dome()
    region = shapely.Polygon([(120, 80), (610, 130), (560, 470), (150, 420)])
    part = sample_target(target, np.eye(4), region, density=4.0)
    whole = sample_target(target, np.eye(4), None, density=4.0)
    inside = shapely.contains_xy(region, whole.plan_xy[:, 0], whole.plan_xy[:, 1])
    strict = shapely.contains_xy(region, part.plan_xy[:, 0], part.plan_xy[:, 1])
    _same(part.subset(strict & (part.weights > 0)), whole.subset(inside & (whole.weights > 0)))
    on = shapely.intersects_xy(region, whole.plan_xy[:, 0], whole.plan_xy[:, 1])
    assert whole.subset(inside).area_mm2 <= part.area_mm2 <= whole.subset(on).area_mm2


def test_outline_samples_come_from_faces_inside_the_region() -> None:
    # a region whose edge runs along mesh edges: the lattice points on it belong to the faces
    # on both sides, but only the inside faces' copies are kept, and every outline sample's
    # face covers some of the region
    target = _dome()
    region = shapely.box(150.0, 100.0, 600.0, 400.0)  # on grid lines of the 30 x 30 dome
    part = sample_target(target, np.eye(4), region, density=4.0)
    rim = ~shapely.contains_xy(region, part.plan_xy[:, 0], part.plan_xy[:, 1])
    assert rim.any()
    tri = shapely.polygons(target.vertices[target.faces[part.face[rim]]][:, :, :2])
    assert np.all(shapely.area(shapely.intersection(tri, region)) > 1.0)
    centre = target.vertices[target.faces].mean(axis=1)
    within = shapely.contains_xy(region, centre[:, 0], centre[:, 1])
    # the weights are the inside faces' areas exactly: none from the faces beyond the edge
    assert np.isclose(part.area_mm2, target.face_areas[within].sum(), rtol=1e-12)


def test_reused_samples_are_the_check_samples() -> None:
    target = _dome()
    job = default_job()
    plan = make_plan(target, job)
    assert plan.pieces
    for pp in plan.pieces:
        piece = pp.piece
        assert piece.extra["fit_on_check_samples"]
        assert _piece_samples(target, piece) is piece.fit.samples
        _same(piece.fit.samples, check_samples(target, piece.part_to_machine, piece.region_plan))
        moved = _shifted(piece, np.array([12.0, 0.0, -30.0]))
        fresh = check_samples(target, moved.part_to_machine, moved.region_plan)
        _same(_piece_samples(target, moved), fresh)
