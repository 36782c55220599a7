"""Lag model: taut-string statics against a finite-difference solution, corner and curve rules."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.sparse import diags
from scipy.sparse.linalg import spsolve

from wirecut.config import default_job
from wirecut.toolpath.lag import (
    block_lag_gain_s,
    circumradius,
    corner_error_mm,
    deflection_shape,
    dwell_time_s,
    mid_span_lag_mm,
    plan_lag,
    rounding_error_mm,
    turn_angles,
)

JOB = default_job()
L = JOB.machine.span_mm


def _string_fd(z1: float, z2: float, n: int = 3201) -> tuple[np.ndarray, np.ndarray]:
    """Deflection of a string T w'' = -q (T = 1, q = 1 on [z1, z2]) fixed at 0 and L, by
    second-order finite differences (independent of the closed form)."""
    z = np.linspace(0.0, L, n)
    h = z[1] - z[0]
    q = ((z >= z1) & (z <= z2)).astype(float)
    inner = n - 2
    a = diags([np.ones(inner - 1), -2 * np.ones(inner), np.ones(inner - 1)], [-1, 0, 1]) / h**2
    w = np.zeros(n)
    w[1:-1] = spsolve(a.tocsc(), -q[1:-1])
    return z, w


@pytest.mark.parametrize(("z1", "z2"), [(300.0, 1300.0), (100.0, 700.0), (0.0, L)])
def test_shape_matches_string_statics(z1, z2):
    z, w = _string_fd(z1, z2)
    b = z2 - z1
    # mid-span deflection of a centred load: q b (2L - b) / (8 T) (string statics, derived in
    # docs/methods-toolpath.md; q L^2 / (8 T) for b = L, the classic uniformly loaded string)
    m_c = b * (2 * L - b) / 8.0
    np.testing.assert_allclose(deflection_shape(z, z1, z2, L) * m_c, w, atol=2e-3 * m_c)


def test_mid_span_lag_scales_with_speed_and_width():
    wire = JOB.wire
    # at the reference speed and width the lag is the reference lag (definition)
    assert mid_span_lag_mm(
        wire.lag_ref_speed_mm_s, wire.lag_ref_width_mm, wire, L
    ) == pytest.approx(wire.lag_ref_mm)
    # b = L: q L^2 / 8T against b_ref (2L - b_ref) (taut string)
    ratio = L * L / (wire.lag_ref_width_mm * (2 * L - wire.lag_ref_width_mm))
    got = mid_span_lag_mm(2 * wire.lag_ref_speed_mm_s, L, wire, L)
    assert got == pytest.approx(2 * wire.lag_ref_mm * ratio)
    # centred block: the largest lag per unit speed is the mid-span lag per unit speed
    gain = block_lag_gain_s(300.0, 1300.0, wire, L)
    assert gain == pytest.approx(wire.lag_ref_mm / wire.lag_ref_speed_mm_s)


def test_corner_and_curve_rules():
    # a 90 degree turn: the chord from K - l u1 to K + l u2 passes l / sqrt(2) from K (geometry)
    assert corner_error_mm(2.0, math.pi / 2) == pytest.approx(2.0 / math.sqrt(2.0))
    # straight on: no error
    assert corner_error_mm(2.0, 0.0) == 0.0
    # tangent point at distance l from a circle of radius rho: sqrt(rho^2 + l^2) - rho (Pythagoras)
    assert rounding_error_mm(3.0, 4.0) == pytest.approx(1.0)  # 3-4-5 triangle
    # exponential relaxation: e^(-t / tau) * e0 = allowed  =>  t = tau ln(e0 / allowed)
    assert dwell_time_s(1.0, 0.1, 1.5) == pytest.approx(1.5 * math.log(10.0))
    assert dwell_time_s(0.05, 0.1, 1.5) == 0.0


def test_turns_and_radius_of_known_polylines():
    square = np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0], [0.0, 1.0]])
    np.testing.assert_allclose(turn_angles(square), [0, math.pi / 2, math.pi / 2, 0])
    a = np.linspace(0.0, 1.0, 12)
    circle = np.column_stack([7.0 * np.cos(a), 7.0 * np.sin(a)])  # points on a circle of radius 7
    np.testing.assert_allclose(circumradius(circle)[1:-1], 7.0)


def test_plan_lag_dwells_at_sharp_corner_only():
    path = np.array([[0.0, 0.0], [50.0, 0.0], [50.0, 50.0], [100.0, 50.0 + 1e-3]])
    plan = plan_lag(path, np.full(3, 4.0), np.ones(4, bool), 0.5, 0.125, 1.5)
    # lag 0.5 s * 4 mm/s = 2 mm; 90 degree corners: error sqrt(2) mm > 0.125 mm
    assert plan.corner.tolist() == [False, True, True, False]
    err = 2.0 * math.sin(math.pi / 4)
    assert plan.dwell_s[1] == pytest.approx(1.5 * math.log(err / 0.125))
