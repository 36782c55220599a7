"""Kerf model, mitre offsets of polylines and the inclination rule."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from shapely.geometry import LineString, Point
from toolpath_shapes import make_piece

from wirecut.config import default_job
from wirecut.toolpath.build import build_program
from wirecut.toolpath.kerf import inclination_cos, kerf_mm, offset_polyline, vertex_average

JOB = default_job()


def test_kerf_model_values():
    w = JOB.wire  # base 0.9 mm, coeff 1.2 mm^2/s (the profile's example constants)
    assert kerf_mm(4.0, w) == pytest.approx(0.9 + 1.2 / 4.0)  # kerf = base + coeff / v
    assert kerf_mm(2.0, w) > kerf_mm(4.0, w)  # slower: wider (common practice)
    np.testing.assert_allclose(vertex_average(np.array([1.0, 3.0, 5.0])), [1, 2, 4, 5])


def test_offset_of_a_step_is_exact():
    step = np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [20.0, 10.0]])
    off, clamped = offset_polyline(step, np.full(3, 0.5), side=1.0)
    # left of travel: the concave corner meets at (9.5, 0.5), the convex one at (9.5, 10.5)
    np.testing.assert_allclose(off, [[0, 0.5], [9.5, 0.5], [9.5, 10.5], [20, 10.5]], atol=1e-12)
    assert clamped == 0
    # every offset segment runs exactly 0.5 from the original polyline (shapely distance);
    # the convex mitre vertex itself is 0.5 * sqrt(2) from the corner (mitre geometry)
    line = LineString(step)
    for a, b in zip(off[:-1], off[1:], strict=True):
        for s in (0.1, 0.5, 0.9):
            assert line.distance(Point(a + s * (b - a))) == pytest.approx(0.5, abs=1e-12)
    assert line.distance(Point(off[2])) == pytest.approx(0.5 * math.sqrt(2.0))


def test_offset_with_different_segment_distances():
    # two perpendicular segments shifted 1 and 2: the vertex moves along the bisector of the
    # normals (0, 1) and (-1, 0) by the mean offset 1.5 over cos(45 deg) (mitre geometry), so
    # to (10 - 1.5, 0 + 1.5); it then lies 0.5 = |2 - 1| / 2 off each shifted line, where the
    # exact intersection (8, 1) would slide far along the lines for a gentle turn
    path = np.array([[0.0, 0.0], [10.0, 0.0], [10.0, 10.0]])
    off, _ = offset_polyline(path, np.array([1.0, 2.0]), side=1.0)
    np.testing.assert_allclose(off[1], [8.5, 1.5])
    assert abs(off[1][1] - 1.0) == pytest.approx(0.5)  # off the line y = 1 by |d_a - d_b| / 2
    assert abs(off[1][0] - 8.0) == pytest.approx(0.5)  # off the line x = 8 by the same


@pytest.mark.parametrize("lean_deg", [0.0, 10.0, 30.0])
def test_inclination_cos(lean_deg):
    a = math.radians(lean_deg)
    t = np.array([[1.0, 0.0]])
    # wire leaning in the offset direction (y) by a: the in-plane offset grows by 1 / cos(a)
    lean_normal = np.array([[0.0, math.sin(a), math.cos(a)]])
    assert inclination_cos(t, lean_normal)[0] == pytest.approx(math.cos(a))  # plane geometry
    # wire leaning along the segment: the strip is still perpendicular to y, no change
    lean_along = np.array([[math.sin(a), 0.0, math.cos(a)]])
    assert inclination_cos(t, lean_along)[0] == pytest.approx(1.0)


def test_tapered_cut_slower_face_gets_wider_kerf():
    # flat profile 600 mm at the left face, 400 mm at the right: the left face sets the speed
    left = np.array([[200.0, 150.0], [800.0, 150.0]])
    right = np.array([[300.0, 150.0], [700.0, 150.0]])
    job = dataclasses.replace(JOB, wire=dataclasses.replace(JOB.wire, lag_ref_mm=0.0))
    piece = make_piece(left, right, (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0))
    program, report, findings = build_program(piece, job)
    assert program is not None and findings == []
    v_left = JOB.wire.cut_speed_mm_s  # the faster face cuts at the cut speed
    v_right = v_left * 400.0 / 600.0  # same time, 400 mm instead of 600 mm (ratio of lengths)
    k_left = 0.9 + 1.2 / v_left  # kerf(v) = base + coeff / v
    k_right = 0.9 + 1.2 / v_right
    assert report.kerf_left_mm == pytest.approx([k_left, k_left])
    assert report.kerf_right_mm == pytest.approx([k_right, k_right])
    # horizontal segments: the wire leans along them only, so the offset is kerf / 2 straight up
    np.testing.assert_allclose(report.left_offset[:, 1] - 150.0, k_left / 2, atol=1e-9)
    np.testing.assert_allclose(report.right_offset[:, 1] - 150.0, k_right / 2, atol=1e-9)
    assert report.iterations >= 2
