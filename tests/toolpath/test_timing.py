"""Timing: the faster face at the cut speed, the slower one follows, axes within their limit."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from toolpath_shapes import make_piece

from wirecut.config import default_job
from wirecut.toolpath.build import build_program, resample_profiles
from wirecut.toolpath.program import Op
from wirecut.toolpath.timing import axis_speeds, time_moves

JOB = default_job()


def test_faster_face_at_cut_speed():
    left = np.array([[0.0, 0.0], [30.0, 40.0]])  # 50 mm (3-4-5 triangle)
    right = np.array([[0.0, 0.0], [15.0, 20.0]])  # 25 mm
    towers = np.array([[0.0, 0.0, 0.0, 0.0], [30.0, 40.0, 15.0, 20.0]])
    t = time_moves(left, right, towers, 5.0, 100.0)
    assert t.duration_s[0] == pytest.approx(10.0)  # 50 mm / 5 mm/s
    assert t.right_speed_mm_s[0] == pytest.approx(2.5)  # 25 mm / 10 s
    assert t.limited_count == 0
    slow = time_moves(left, right, towers, 5.0, 2.0)
    assert slow.duration_s[0] == pytest.approx(20.0)  # Y axis 40 mm / 2 mm/s
    assert slow.axis_limited[0]


def test_axis_limit_in_a_built_program():
    # a cut speed above the axis limit: every cut move must be slowed to the axis limit
    job = dataclasses.replace(JOB, wire=dataclasses.replace(JOB.wire, cut_speed_mm_s=40.0))
    left = np.array([[200.0, 150.0], [800.0, 150.0]])
    piece = make_piece(left, left, (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0))
    program, report, _ = build_program(piece, job)
    pos = program.positions()
    feed = np.flatnonzero(program.ops == Op.FEED)
    v = axis_speeds(pos[[*feed]], np.ones(len(feed) - 1))  # shape check only
    assert v.shape == (len(feed) - 1, 4)
    speeds = np.abs(pos[feed + 1] - pos[feed]) / program.duration_s[feed, None]
    assert speeds.max() <= job.machine.max_axis_speed_mm_s * (1 + 1e-9)
    assert report.speed_limited_moves > 0


def test_resampling_keeps_rulings_and_surface():
    left = np.array([[0.0, 0.0], [35.0, 0.0], [35.0, 7.0]])
    right = np.array([[10.0, 5.0], [40.0, 5.0], [40.0, 9.0]])
    l2, r2 = resample_profiles(left, right, 10.0)
    assert np.max(np.linalg.norm(np.diff(l2, axis=0), axis=1)) <= 10.0 + 1e-12
    for p in (*left, *right):  # every original ruling kept
        assert np.min(np.linalg.norm(np.vstack([l2, r2]) - p, axis=1)) < 1e-12
    # inserted rulings lie on the original strip: same parameter on both faces
    s_left = l2[1, 0] / 35.0
    np.testing.assert_allclose(r2[1], (1 - s_left) * right[0] + s_left * right[1])
