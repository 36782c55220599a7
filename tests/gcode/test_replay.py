"""Replay: the surface a program cuts, measured against shapes whose answer is known."""

from __future__ import annotations

import dataclasses
import math
import sys
from pathlib import Path

import numpy as np
import pytest
import trimesh
from shapely.geometry import LineString, Point

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "toolpath"))
from toolpath_shapes import TargetArrays, arc_profile, make_piece, mesa  # noqa: E402

from wirecut.config import default_job  # noqa: E402
from wirecut.gcode.replay import replay, replay_cut_surface  # noqa: E402
from wirecut.ruled.model import RuledCut  # noqa: E402
from wirecut.toolpath.build import build_program  # noqa: E402
from wirecut.toolpath.kerf import kerf_mm  # noqa: E402
from wirecut.toolpath.towers import face_points  # noqa: E402

JOB = default_job()
TOL = JOB.tolerance.surface_mm
BLOCK_X, BLOCK_Y, BLOCK_Z = (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0)


def _wire(**kw):
    return dataclasses.replace(JOB, wire=dataclasses.replace(JOB.wire, **kw))


def _profile_samples(prof: np.ndarray, zs: np.ndarray) -> TargetArrays:
    """Samples inside the segments of a prism's profile, normals to the left (waste side)."""
    pts, nrm = [], []
    for a, b in zip(prof[:-1], prof[1:], strict=True):
        t = (b - a) / np.linalg.norm(b - a)
        for s in np.linspace(0.05, 0.95, 10):
            q = a + s * (b - a)
            for z in zs:
                pts.append([q[0], q[1], z])
                nrm.append([-t[1], t[0], 0.0])
    pts = np.array(pts)
    return TargetArrays(pts, np.array(nrm), np.ones(len(pts)))


@pytest.mark.parametrize("tapered", [False, True])
def test_constant_kerf_cut_lies_half_kerf_from_wire(tapered):
    job = _wire(kerf_speed_coeff_mm2_s=0.0, lag_ref_mm=0.0)
    half = job.wire.kerf_base_mm / 2
    left = mesa(200.0, 800.0, 100.0, 100.0, 150.0)
    right = left.copy()
    if tapered:  # the top rises 50 mm across the block: the wire leans in y by atan(0.05)
        right[2:4, 1] += 50.0
    piece = make_piece(left, right, BLOCK_X, BLOCK_Y, BLOCK_Z)
    program, _, _ = build_program(piece, job)
    surf = replay_cut_surface(program, piece.block, job)
    for j in range(len(surf.z_mm)):
        wire = LineString(surf.wire[j])
        cut = surf.cut[j]
        mids = 0.5 * (cut[:-1] + cut[1:])
        d = np.array([wire.distance(Point(p)) for p in mids])
        if not tapered:
            # wire along z: the edge is kerf / 2 from the wire's trace in every plane
            np.testing.assert_allclose(d, half, atol=1e-6)
        else:
            # on the top, in-plane distance (kerf / 2) / cos(a), cos(a) = 1 / sqrt(1 + 0.05^2)
            # (plane geometry), so the 3D distance is kerf / 2
            t = (surf.z_mm[j] - 300.0) / 1000.0
            y_top = 200.0 + 50.0 * t
            top = (np.abs(mids[:, 1] - y_top) < 0.1) & (mids[:, 0] > 360) & (mids[:, 0] < 640)
            assert top.sum() > 10
            np.testing.assert_allclose(d[top], half * math.sqrt(1 + 0.05**2), atol=1e-6)


def test_speed_dependent_kerf_follows_each_face():
    left = np.array([[200.0, 150.0], [800.0, 150.0]])
    right = np.array([[300.0, 150.0], [700.0, 150.0]])
    job = _wire(lag_ref_mm=0.0)
    piece = make_piece(left, right, BLOCK_X, BLOCK_Y, BLOCK_Z)
    program, _, _ = build_program(piece, job)
    surf = replay_cut_surface(program, piece.block, job)
    lf = face_points(program.positions(), 300.0, JOB.machine.span_mm)
    cut_moves = (
        np.isfinite(surf.kerf_mm[0])
        & (lf[:-1, 0] >= 200.0 - 1e-9)
        & (lf[1:, 0] <= 800.0 + 1e-9)
        & (np.abs(lf[1:, 1] - lf[:-1, 1]) < 1e-9)
    )
    assert cut_moves.sum() >= 60  # 600 mm in moves of at most 10 mm
    v_l, v_r = surf.move_speed_mm_s[0, cut_moves], surf.move_speed_mm_s[-1, cut_moves]
    # the slower (right, 400 mm) face runs at 400 / 600 of the left one (ratio of lengths)
    np.testing.assert_allclose(v_r / v_l, 400.0 / 600.0, rtol=1e-9)
    k_l, k_r = surf.kerf_mm[0, cut_moves], surf.kerf_mm[-1, cut_moves]
    np.testing.assert_allclose(k_r, 0.9 + 1.2 / v_r)  # kerf(v) = base + coeff / v
    assert np.all(k_r > k_l)
    # the cut edge at both faces is back on the flat profile y = 150
    inside = (surf.cut[0, :, 0] > 210) & (surf.cut[0, :, 0] < 790)
    np.testing.assert_allclose(surf.cut[0, inside, 1], 150.0, atol=1e-9)
    inside = (surf.cut[-1, :, 0] > 310) & (surf.cut[-1, :, 0] < 690)
    np.testing.assert_allclose(surf.cut[-1, inside, 1], 150.0, atol=1e-9)


def test_sharp_corner_needs_the_dwell():
    prof = mesa(200.0, 800.0, 100.0, 100.0, 150.0)  # four 90 degree corners
    piece = make_piece(prof, prof, BLOCK_X, BLOCK_Y, BLOCK_Z)
    samples = _profile_samples(prof, np.linspace(300.0, 1300.0, 11))
    plain, rep0, _ = build_program(piece, JOB, lag_share=1e6)  # no lag compensation
    comp, rep1, _ = build_program(piece, JOB)
    assert rep0.dwell_time_s == 0.0 and rep1.corner_dwells == 4
    r0 = replay(plain, piece, JOB, samples)
    r1 = replay(comp, piece, JOB, samples)
    # lag 2 mm at mid-span on a 90 degree corner cuts ~ 2 sin(45 deg) = 1.4 mm (chord estimate)
    assert r0.max_abs_mm > TOL
    assert r1.max_abs_mm <= TOL
    assert r1.machine_time_s == pytest.approx(comp.machine_time_s)
    assert r1.dwell_time_s == pytest.approx(rep1.dwell_time_s)


def _hypar(c: float = 2000.0):
    """y = 150 + (x - 500)(z - 800) / c: doubly ruled; lines of constant x are rulings and so
    are its sections z = const (hyperbolic paraboloid, standard)."""
    x = np.linspace(200.0, 800.0, 61)
    left = np.column_stack([x, 150.0 + (x - 500.0) * (300.0 - 800.0) / c])
    right = np.column_stack([x, 150.0 + (x - 500.0) * (1300.0 - 800.0) / c])
    gx, gz = np.meshgrid(np.linspace(205.0, 795.0, 60), np.linspace(305.0, 1295.0, 21))
    gx, gz = gx.ravel(), gz.ravel()
    pts = np.column_stack([gx, 150.0 + (gx - 500.0) * (gz - 800.0) / c, gz])
    n = np.column_stack([-(gz - 800.0) / c, np.ones_like(gx), -(gx - 500.0) / c])
    n /= np.linalg.norm(n, axis=1)[:, None]  # gradient of y - f(x, z) (points to +y, the waste)
    return left, right, TargetArrays(pts, n, np.ones(len(pts)))


def test_hyperbolic_paraboloid_replays_within_tolerance():
    left, right, samples = _hypar()
    piece = make_piece(left, right, BLOCK_X, BLOCK_Y, BLOCK_Z)
    program, _, _ = build_program(piece, JOB)
    r = replay(program, piece, JOB, samples)
    assert r.max_abs_mm <= TOL
    assert np.all(r.within)
    # the ruled cut is exact on a doubly ruled surface: only lag and kerf residue remain
    assert r.rms_mm < 0.02


def _plan_deviation(cut: RuledCut, samples: TargetArrays) -> np.ndarray:
    """Signed deviation of the planned cut itself, by trimesh's closest point on its mesh."""
    v, f = cut.to_mesh(steps_along_wire=1)  # planar strips here: exact
    mesh = trimesh.Trimesh(v, f, process=False)
    closest, _, _ = trimesh.proximity.closest_point(mesh, samples.points)
    return np.sum((closest - samples.points) * samples.normals, axis=1)


def _cylinder():
    """Upper arc of radius 2000 about the axis (500, -1800), rulings every 20 mm in x."""
    x = np.linspace(200.0, 800.0, 31)
    prof = arc_profile(500.0, -1800.0, 2000.0, x)
    gx, gz = np.meshgrid(np.linspace(201.0, 799.0, 300), np.linspace(320.0, 1280.0, 5))
    gx, gz = gx.ravel(), gz.ravel()
    gy = -1800.0 + np.sqrt(2000.0**2 - (gx - 500.0) ** 2)
    n = np.column_stack([gx - 500.0, gy + 1800.0, np.zeros_like(gx)]) / 2000.0
    return (
        prof,
        prof,
        (300.0, 1300.0),
        TargetArrays(np.column_stack([gx, gy, gz]), n, np.ones(len(gx))),
    )


def _sphere_strip():
    """Sphere of radius 1500 about (500, -1300, 800), strip 100 mm wide; the cut through the
    sections at the two faces (a cylinder of radius sqrt(1500^2 - 50^2))."""
    c, r = np.array([500.0, -1300.0, 800.0]), 1500.0
    x = np.linspace(250.0, 750.0, 26)
    rf = math.sqrt(r * r - 50.0**2)
    prof = arc_profile(500.0, -1300.0, rf, x)
    gx, gz = np.meshgrid(np.linspace(251.0, 749.0, 200), np.linspace(752.0, 848.0, 7))
    gx, gz = gx.ravel(), gz.ravel()
    gy = c[1] + np.sqrt(r * r - (gx - c[0]) ** 2 - (gz - c[2]) ** 2)
    pts = np.column_stack([gx, gy, gz])
    n = (pts - c) / r
    return prof, prof, (750.0, 850.0), TargetArrays(pts, n, np.ones(len(gx)))


def _saddle():
    # a milder twist than the hyperbolic paraboloid test: the wire-centre surface kerf / 2 off
    # a twisted ruled surface is not ruled, so a straight wire misses it by about
    # (kerf / 2) (1 - cos(phi / 2)) at mid-span, phi the twist of the section normals between
    # the faces (0.018 mm for c = 2000, 0.0045 mm for c = 4000; docs/methods-toolpath.md)
    left, right, samples = _hypar(4000.0)
    return left, right, (300.0, 1300.0), samples


@pytest.mark.parametrize("shape", [_cylinder, _sphere_strip, _saddle])
def test_plan_and_replay_agree(shape):
    left, right, z_mm, samples = shape()
    x_mm = (float(left[0, 0]), float(left[-1, 0]))
    piece = make_piece(left, right, x_mm, BLOCK_Y, z_mm)
    # speed-dependent kerf on, lag off: the lag's residue (up to lag_share * tolerance at the
    # corner dwells, ~0.01 mm of phase lag on these curves) is checked in the corner test
    job = _wire(lag_ref_mm=0.0)
    program, _, findings = build_program(piece, job)
    assert program is not None and findings == []
    if shape is _saddle:
        plan = np.zeros(len(samples.points))  # the cut is the hyperbolic paraboloid itself
    else:
        plan = _plan_deviation(piece.fit.cut, samples)
    r = replay(program, piece, job, samples)
    plan_max = float(np.abs(plan).max())
    assert abs(r.max_abs_mm - plan_max) <= max(0.01 * plan_max, 0.01)
    plan_rms = float(np.sqrt(np.mean(plan**2)))
    assert abs(r.rms_mm - plan_rms) <= max(0.01 * plan_rms, 0.01)
    if shape is _cylinder:
        # chord of 20 mm in x on the arc: the largest is at the ends; sagitta
        # s = R - sqrt(R^2 - c^2 / 4) (standard circle geometry)
        chord = float(np.max(np.linalg.norm(np.diff(left, axis=0), axis=1)))
        sag = 2000.0 - math.sqrt(2000.0**2 - chord**2 / 4)
        assert plan.min() == pytest.approx(-sag, rel=0.02)
    if shape is _sphere_strip:
        # at mid-strip the sphere stands R - sqrt(R^2 - 50^2) above the face sections
        assert plan_max == pytest.approx(1500.0 - math.sqrt(1500.0**2 - 50.0**2), rel=0.05)


def test_replay_does_not_read_the_planned_cut():
    prof = mesa(200.0, 800.0, 100.0, 100.0, 150.0)
    piece = make_piece(prof, prof, BLOCK_X, BLOCK_Y, BLOCK_Z)
    program, _, _ = build_program(piece, JOB)
    samples = _profile_samples(prof, np.array([500.0, 800.0]))
    a = replay(program, piece, JOB, samples)
    b = replay(program, piece.block, JOB, samples)  # the block alone is enough
    np.testing.assert_array_equal(a.signed, b.signed)
    assert kerf_mm(JOB.wire.cut_speed_mm_s, JOB.wire) == pytest.approx(1.2)  # 0.9 + 1.2 / 4


def _brute_distance(lo, hi, w, q):
    """|distance| from each point to its own section by testing every segment (shapely)."""
    out = np.empty(len(q))
    for i in range(len(q)):
        section = LineString((1 - w[i]) * lo + w[i] * hi)
        out[i] = section.distance(Point(q[i]))
    return out


@pytest.mark.parametrize("fan", [0.0, 0.5, 2.0])
def test_section_distance_is_exact_where_rulings_fan(fan):
    from wirecut.gcode.replay import _signed_to_sections

    # a lead-in down, a wavy profile along the sweep, a lead-out up; the far plane's vertices
    # are spaced unlike the near one's (fan > 0: the rulings fan), which defeats a search by
    # interpolated vertex index
    rng = np.random.default_rng(3)
    u = np.linspace(0.0, 1.0, 600)
    x_lo = 1000.0 * u
    x_hi = 1000.0 * u ** (1.0 + fan) + 40.0 * fan
    y = lambda x: 100.0 + 8.0 * np.sin(x / 70.0)  # noqa: E731
    lead = lambda x0, y0: np.column_stack([np.full(20, x0), np.linspace(y0 + 60, y0, 20)])  # noqa: E731
    lo = np.vstack([lead(x_lo[0], y(x_lo[0])), np.column_stack([x_lo, y(x_lo)])])
    hi = np.vstack([lead(x_hi[0], y(x_hi[0]) + 5), np.column_stack([x_hi, y(x_hi) + 5.0])])
    w = rng.uniform(0.0, 1.0, 400)
    k = rng.integers(0, len(lo) - 1, 400)
    on = (1 - w[:, None]) * lo[k] + w[:, None] * hi[k]
    q = on + rng.normal(0.0, 0.5, (400, 2))
    got = np.abs(_signed_to_sections(lo, hi, w, q))
    # shapely's distance (GEOS) tests every segment: the reference
    np.testing.assert_allclose(got, _brute_distance(lo, hi, w, q), atol=1e-9)


def test_a_piece_without_a_block_says_so_in_its_header():
    # the allocation found no stock block for the blank (a no-stock-block finding): the
    # program's header must say that, not leave a bare placeholder
    left = mesa(200.0, 800.0, 100.0, 100.0, 150.0)
    piece = make_piece(left, left.copy(), BLOCK_X, BLOCK_Y, BLOCK_Z)
    assert piece.stock is None
    program, _, _ = build_program(piece, JOB)
    stock = dict(program.header)["stock"]
    assert "none on hand" in stock and "findings" in stock
    assert "(" not in stock and ")" not in stock  # it goes into a G-code comment
