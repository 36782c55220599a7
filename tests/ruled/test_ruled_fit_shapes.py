"""The ruled fit on shapes whose best cut is known by construction."""

from __future__ import annotations

import math

import numpy as np
import pytest
from ruled_shapes import height_field_samples, ruled_samples

from wirecut.config import Policy, ToleranceSpec
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.model import RuledCut
from wirecut.ruled.skew import CROSSING

EYE = np.eye(4)


def sagitta(radius: float, chord: float) -> float:
    # sagitta s = R - sqrt(R^2 - c^2/4) (standard circle geometry)
    return radius - np.sqrt(radius**2 - chord**2 / 4.0)


@pytest.mark.parametrize("swap", [False, True])
def test_hyperbolic_paraboloid_is_recovered(swap):
    # y = x z / c: for fixed z, y is linear in x and for fixed x linear in z (doubly ruled,
    # standard); wire along either family of rulings
    c = 300.0
    xs, zs = np.linspace(-150, 150, 91), np.linspace(-100, 100, 41)
    if swap:
        xs, zs = zs, xs
    s = height_field_samples(lambda x, z: x * z / c + 400.0, xs, zs)
    fit = fit_cut(s, zs[0], zs[-1], EYE, ToleranceSpec(0.05))
    assert fit.report.max_abs_mm < 0.001  # doubly ruled: exact
    assert fit.report.feasible_area_fraction == pytest.approx(1.0)
    assert fit.cut.is_monotone()


def test_cylinder_along_its_axis_is_exact():
    # a cylinder is ruled along its axis (standard); with tolerance 0.01 mm the ruling spacing
    # keeps the chord sag between rulings at 10 % of it, so the balanced error is <= 0.0005 mm
    r = 800.0
    s = height_field_samples(
        lambda x, z: np.sqrt(r**2 - x**2), np.linspace(-150, 150, 301), np.linspace(-100, 100, 21)
    )
    fit = fit_cut(s, -100.0, 100.0, EYE, ToleranceSpec(0.01))
    assert fit.report.max_abs_mm < 0.001


@pytest.mark.parametrize(
    ("policy", "share"),
    [
        (Policy.BALANCED, 0.5),  # Chebyshev equioscillation: best line error = s / 2
        (Policy.NO_GOUGE, 1.0),  # chord through the ends, above the arc: excess = s
    ],
)
def test_cylinder_across_its_axis_costs_the_sagitta(policy, share):
    r, w = 800.0, 300.0
    s = height_field_samples(
        lambda x, z: np.sqrt(r**2 - z**2), np.linspace(-100, 100, 21), np.linspace(-150, 150, 121)
    )
    fit = fit_cut(s, -w / 2, w / 2, EYE, ToleranceSpec(0.5, policy), correspondence=False)
    expected = share * sagitta(r, w)
    assert fit.report.max_abs_mm == pytest.approx(expected, rel=0.02)
    if policy is Policy.NO_GOUGE:
        assert fit.report.max_gouge_mm < 1e-6  # never into the part
        assert fit.report.gouge_area_fraction == 0.0


@pytest.mark.parametrize("policy", [Policy.BALANCED, Policy.NO_GOUGE])
def test_spherical_cap_strip(policy):
    # the section of a sphere by the plane x = const is a circle of radius sqrt(R^2 - x^2)
    # (standard); the worst strip is the outermost one
    big_r, w, half_x = 800.0, 200.0, 40.0
    s = height_field_samples(
        lambda x, z: np.sqrt(big_r**2 - x**2 - z**2),
        np.linspace(-half_x, half_x, 81),
        np.linspace(-w / 2, w / 2, 81),
    )
    fit = fit_cut(s, -w / 2, w / 2, EYE, ToleranceSpec(0.5, policy))
    sag = sagitta(np.sqrt(big_r**2 - half_x**2), w)
    if policy is Policy.BALANCED:
        assert fit.report.max_abs_mm == pytest.approx(sag / 2, rel=0.02)  # equioscillation
    else:
        assert fit.report.max_excess_mm == pytest.approx(sag, rel=0.02)
        assert fit.report.max_gouge_mm < 1e-6  # zero gouge


def test_hyperboloid_of_one_sheet_along_its_rulings():
    # x^2/a^2 + y^2/a^2 - z^2/c^2 = 1 is doubly ruled: (a(cos u - v sin u), a(sin u + v cos u),
    # c v) (Weisstein, MathWorld, "One-Sheeted Hyperboloid"); at the top the rulings have
    # dx/dz = -+a/c, so vertical rulings cannot follow them and step 3 must
    a, c, w = 500.0, 1000.0, 200.0
    s = height_field_samples(
        lambda x, z: np.sqrt(a**2 * (1 + z**2 / c**2) - x**2),
        np.linspace(-80, 80, 161),
        np.linspace(-w / 2, w / 2, 41),
    )
    fit = fit_cut(s, -w / 2, w / 2, EYE, ToleranceSpec(0.01), ruling_spacing_mm=2.0)
    assert fit.skewed
    assert fit.cut.is_monotone()
    skew = fit.cut.right[:, 0] - fit.cut.left[:, 0]
    mid = np.argmin(np.abs(0.5 * (fit.cut.left[:, 0] + fit.cut.right[:, 0])))
    # the ruling through the top (u = pi/2) has dx/dz = -a/c: skew = -+ w a / c
    assert abs(skew[mid]) == pytest.approx(w * a / c, rel=0.02)
    assert fit.report.max_abs_mm < 0.001


def _smooth(rng, n: int, amp: float) -> np.ndarray:
    k = np.arange(1, 4)
    phase = rng.uniform(0, 2 * np.pi, 3)
    a = rng.normal(0, amp, 3) / k**2
    u = np.linspace(0, 1, n)
    return (a[None, :] * np.sin(2 * np.pi * k[None, :] * u[:, None] + phase)).sum(axis=1)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_ruled_surface_is_recovered(seed):
    # a ruled surface built from two random smooth directrices through the same knots is its
    # own best fit (by construction), when its rulings fan no more than the fit allows
    # (skew.CROSSING: beyond it one face would crawl on the machine)
    rng = np.random.default_rng(seed)
    k = 31
    knots = np.linspace(-150, 150, k)
    wave = _smooth(rng, k, 30.0)
    most = 0.9 * CROSSING * (knots[1] - knots[0])
    skew = 30.0 + wave * min(1.0, most / np.abs(np.diff(wave)).max())
    truth = RuledCut(
        np.column_stack([knots - skew / 2, 500 + _smooth(rng, k, 40.0)]),
        np.column_stack([knots + skew / 2, 520 + _smooth(rng, k, 40.0)]),
        -100.0,
        100.0,
        EYE,
    )
    assert truth.is_monotone()
    s = ruled_samples(truth)
    fit = fit_cut(
        s,
        -100.0,
        100.0,
        EYE,
        ToleranceSpec(0.01),
        x_range=(knots[0], knots[-1]),
        ruling_spacing_mm=knots[1] - knots[0],
    )
    assert fit.report.max_abs_mm < 0.001
    assert fit.report.outside_area_fraction == 0.0
    assert fit.cut.is_monotone()


def test_a_skew_hint_never_makes_the_fit_worse():
    # a cylinder whose axis leans in plan, y = (x - z / 2)^2 / 2R: its rulings run along
    # (1/2, 0, 1), so vertical rulings would leave the sagitta of the section along z (about
    # 1.9 mm here) and the best cut is skewed. A sub-piece fitted with the skew the whole
    # strip's fit found as an extra start must end at least as good as without it (the fit
    # keeps the better start), and the rulings never cross
    r = 1500.0

    def f(x, z):
        return (x - 0.5 * z) ** 2 / (2.0 * r) + 400.0

    zs = np.linspace(-150, 150, 31)
    whole = fit_cut(height_field_samples(f, np.linspace(-600, 600, 241), zs), -150.0, 150.0,
                    EYE, ToleranceSpec(0.5))  # fmt: skip
    assert whole.skewed
    cut = whole.cut
    hint = (0.5 * (cut.left[:, 0] + cut.right[:, 0]), cut.right[:, 0] - cut.left[:, 0])
    part = height_field_samples(f, np.linspace(-100, 300, 81), zs)
    plain = fit_cut(part, -150.0, 150.0, EYE, ToleranceSpec(0.5), x_range=(-160.0, 360.0))
    hinted = fit_cut(part, -150.0, 150.0, EYE, ToleranceSpec(0.5), x_range=(-160.0, 360.0),
                     skew_hint=hint)  # fmt: skip
    assert hinted.report.max_abs_mm <= plain.report.max_abs_mm + 1e-9
    assert hinted.cut.is_monotone() and plain.cut.is_monotone()


def test_three_samples_and_two_rulings_give_a_finite_cut_without_a_warning():
    # a sliver of a piece can hold fewer samples than the heights of its two rulings: with
    # no second differences to tie them, the least-squares start was singular, the cut came
    # out NaN and the whole plan was refused. It must be a finite cut through the samples
    # (a plane, y = 300 + 0.1 x + 0.05 z, is exactly a ruled cut), and say nothing on stderr
    import warnings

    def f(x, z):
        return 300.0 + 0.1 * x + 0.05 * z

    samples = height_field_samples(f, np.array([10.0, 20.0, 30.0]), np.array([0.0]))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fit = fit_cut(samples, -50.0, 50.0, EYE, ToleranceSpec(0.5), x_range=(0.0, 40.0),
                      ruling_spacing_mm=100.0)  # fmt: skip
    assert fit.cut.n_rulings == 2
    assert np.isfinite(fit.cut.left).all() and np.isfinite(fit.cut.right).all()
    assert fit.report.max_abs_mm < 1e-3


def _turned_paraboloid(ang: float, k: float = 300.0):
    """y = 300 + u w / k with (u, w) the (x, z) plane turned by ``ang``: a hyperbolic
    paraboloid whose rulings u = const lean tan(ang) to the wire (z), and w = const cot(ang)."""

    def f(x, z):
        u = x * math.cos(ang) + z * math.sin(ang)
        w = -x * math.sin(ang) + z * math.cos(ang)
        return 300.0 + u * w / k

    return f


def test_rulings_past_the_blank_ends_fit_a_piece_as_well_as_its_strip():
    # a hyperbolic paraboloid y = u w / 300 turned 30 deg in the x-z plane: its rulings skew
    # tan 30 of the blank's width (87 mm over 150 mm), and the fit of a long strip finds them
    # (0.025 mm). A 600 mm piece of it whose rulings must end at the blank's ends has to hold
    # its end rulings' skew down to cover its corners (skew.end_bounds) and fits worse;
    # allowed to run past the ends by half the strip's skew (the split's pad, through the
    # waste beyond the outline) it fits as well as the strip
    ang = math.radians(30.0)
    f = _turned_paraboloid(ang)

    zs = np.linspace(-75, 75, 16)
    whole = fit_cut(height_field_samples(f, np.linspace(-900, 900, 361), zs), -75.0, 75.0,
                    EYE, ToleranceSpec(0.5))  # fmt: skip
    cut = whole.cut
    hint = (0.5 * (cut.left[:, 0] + cut.right[:, 0]), cut.right[:, 0] - cut.left[:, 0])
    assert np.abs(hint[1]).max() == pytest.approx(150.0 * math.tan(ang), rel=0.05)
    part = height_field_samples(f, np.linspace(-300, 300, 121), zs)
    pad = 0.5 * float(np.abs(hint[1]).max())
    held = fit_cut(part, -75.0, 75.0, EYE, ToleranceSpec(0.5), x_range=(-325.0, 325.0),
                   skew_hint=hint)  # fmt: skip
    padded = fit_cut(part, -75.0, 75.0, EYE, ToleranceSpec(0.5),
                     x_range=(-325.0 - pad, 325.0 + pad), skew_hint=hint)  # fmt: skip
    assert padded.report.max_abs_mm <= whole.report.max_abs_mm + 0.01
    assert held.report.max_abs_mm > padded.report.max_abs_mm + 0.1
    assert padded.cut.is_monotone()


@pytest.mark.parametrize(("n", "k", "seed"), [(3000, 30, 0), (200, 12, 1), (40, 3, 2), (9, 5, 3)])
def test_the_banded_least_squares_start_matches_sparse_lu_on_the_whole_normal_equations(n, k, seed):
    # the start's normal equations, assembled as sparse products and solved by SciPy's
    # sparse LU (SuperLU, ``spsolve``), an independent solver of the same system, against
    # the banded Cholesky on the interleaved heights
    import scipy.sparse as sp
    from scipy.sparse.linalg import spsolve

    from wirecut.ruled.fit import _SMOOTH, _least_squares_heights
    from wirecut.ruled.skew import second_difference

    rng = np.random.default_rng(seed)
    j = rng.integers(0, k - 1, n)
    w, t = rng.random(n), rng.random(n)
    cols = np.column_stack([j, k + j, j + 1, k + j + 1])
    vals = np.column_stack([(1 - w) * (1 - t), (1 - w) * t, w * (1 - t), w * t])
    a = sp.csr_matrix((vals.ravel(), (np.repeat(np.arange(n), 4), cols.ravel())), (n, 2 * k))
    yt, c = rng.normal(400.0, 30.0, n), rng.uniform(0.5, 1.5, n)
    ac = sp.diags(c) @ a
    reg = sp.block_diag([second_difference(k)] * 2)
    lam2 = _SMOOTH**2 * float((c * c).sum()) / k
    lhs = (ac.T @ ac + lam2 * (reg.T @ reg) + 1e-12 * lam2 * sp.eye(2 * k)).tocsc()
    reference = spsolve(lhs, ac.T @ (c * yt))
    y = _least_squares_heights((cols, vals), yt, c, k)
    assert np.abs(y - reference).max() < 1e-7


def test_no_ruling_leans_further_than_the_slope_the_machine_allows():
    # a hyperbolic paraboloid y = u w / k turned 40 deg in the x-z plane is ruled along
    # lines at 40 deg to the wire (slope tan 40 = 0.84): a free fit finds that lean and fits
    # to a few hundredths of a mm. With the towers 1600 mm apart and 1200 mm of travel,
    # such a ruling's tower ends lie 0.84 * 1600 = 1340 mm apart along the sweep, which no
    # blank leaves room for (MachineSpec.drivable_slope: 0.65 beside a 100 mm blank, 30 mm
    # clearances). Held to that slope, no ruling leans further, and the fit is worse for it
    from wirecut.config import MachineSpec

    ang = math.radians(40.0)
    f = _turned_paraboloid(ang)

    samples = height_field_samples(f, np.linspace(-300, 300, 121), np.linspace(-75, 75, 16))
    free = fit_cut(samples, -75.0, 75.0, EYE, ToleranceSpec(0.5), x_range=(-400.0, 400.0))
    lean = np.abs(free.cut.right[:, 0] - free.cut.left[:, 0]) / 150.0
    assert lean.max() == pytest.approx(math.tan(ang), rel=0.05)
    cap = MachineSpec().drivable_slope(100.0)
    assert cap == pytest.approx((1200.0 - 100.0 - 2 * 30.0) / 1600.0)  # 0.65
    held = fit_cut(samples, -75.0, 75.0, EYE, ToleranceSpec(0.5), x_range=(-400.0, 400.0),
                   max_slope=cap)  # fmt: skip
    lean = np.abs(held.cut.right[:, 0] - held.cut.left[:, 0]) / 150.0
    assert lean.max() <= cap + 1e-9
    assert held.report.max_abs_mm > free.report.max_abs_mm + 0.05
    assert held.cut.is_monotone()
