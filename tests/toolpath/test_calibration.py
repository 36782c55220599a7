"""Calibration of kerf and lag: synthetic cuts made with the model plus seeded noise."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest
from scipy import stats

from wirecut.config import default_job, parse_job
from wirecut.errors import JobError
from wirecut.toolpath.calibration import TestCuts, calibrate, parse_test_cuts, read_test_cuts

JOB = default_job()
L = JOB.machine.span_mm
TRUE_BASE, TRUE_COEFF, TRUE_LAG = 0.85, 1.3, 2.4  # constants of the synthetic wire (mm, mm^2/s, mm)


def _g(b):
    return b * (2.0 * L - b)  # taut-string shape b (2L - b) of the profile's lag model


def synthetic(n_kerf: int, n_lag: int, sigma: float, seed: int) -> TestCuts:
    rng = np.random.default_rng(seed)
    vk = np.tile(np.array([1.5, 2.5, 4.0, 6.0, 8.0]), n_kerf // 5 + 1)[:n_kerf]
    kerf = TRUE_BASE + TRUE_COEFF / vk + rng.normal(0.0, sigma, n_kerf)
    vl = np.tile(np.array([2.0, 3.0, 4.0, 5.0]), n_lag // 4 + 1)[:n_lag]
    bl = np.tile(np.array([600.0, 1000.0, 1200.0]), n_lag // 3 + 1)[:n_lag]
    ref_v, ref_b = JOB.wire.lag_ref_speed_mm_s, JOB.wire.lag_ref_width_mm
    lag = TRUE_LAG * vl / ref_v * _g(bl) / _g(ref_b) + rng.normal(0.0, sigma, n_lag)
    return TestCuts(
        kind=np.array(["kerf"] * n_kerf + ["lag"] * n_lag),
        speed_mm_s=np.concatenate([vk, vl]),
        measured_mm=np.concatenate([kerf, lag]),
        width_mm=np.concatenate([np.full(n_kerf, np.nan), bl]),
        line=np.arange(2, n_kerf + n_lag + 2),
    )


def test_recovers_constants_within_three_standard_errors():
    # one fixed seed; the coverage test below checks the rate over many seeds
    cal = calibrate(synthetic(15, 12, 0.04, seed=1), JOB)
    (b, c), (sb, sc) = cal.kerf.estimate, cal.kerf.stderr
    assert abs(b - TRUE_BASE) < 3 * sb  # unbiased OLS estimate, |error| < 3 s.e. (brief's rule)
    assert abs(c - TRUE_COEFF) < 3 * sc
    assert abs(cal.lag.estimate[0] - TRUE_LAG) < 3 * cal.lag.stderr[0]


def test_standard_error_shrinks_with_more_data():
    few = calibrate(synthetic(10, 8, 0.04, seed=3), JOB)
    many = calibrate(synthetic(160, 128, 0.04, seed=3), JOB)
    # s.e. ~ sigma / sqrt(n) (OLS): 16 times the data gives about a quarter of the error
    ratio_kerf = many.kerf.stderr / few.kerf.stderr
    ratio_lag = many.lag.stderr / few.lag.stderr
    assert np.all(ratio_kerf < 0.5) and np.all(ratio_kerf > 0.1)
    assert 0.1 < ratio_lag[0] < 0.5


def test_kerf_fit_matches_scipy_linregress():
    # kerf is a straight line in 1/v: scipy.stats.linregress gives the same OLS line and errors
    cuts = synthetic(20, 0, 0.05, seed=11)
    cal = calibrate(cuts, JOB)
    ref = stats.linregress(1.0 / cuts.speed_mm_s, cuts.measured_mm)
    np.testing.assert_allclose(cal.kerf.estimate, [ref.intercept, ref.slope], rtol=1e-10)
    np.testing.assert_allclose(cal.kerf.stderr, [ref.intercept_stderr, ref.stderr], rtol=1e-8)


def test_lag_fit_matches_through_origin_formulas():
    # line through the origin: beta = sum(xy)/sum(x^2), se = sqrt(s^2 / sum(x^2)),
    # s^2 = RSS/(n-1) (textbook regression through the origin)
    cuts = synthetic(0, 9, 0.05, seed=5)
    cal = calibrate(cuts, JOB)
    x = cuts.speed_mm_s / JOB.wire.lag_ref_speed_mm_s * _g(cuts.width_mm) / _g(1000.0)
    y = cuts.measured_mm
    beta = (x @ y) / (x @ x)
    s2 = ((y - beta * x) ** 2).sum() / (len(y) - 1)
    assert cal.lag.estimate[0] == pytest.approx(beta, rel=1e-12)
    assert cal.lag.stderr[0] == pytest.approx(np.sqrt(s2 / (x @ x)), rel=1e-10)
    assert cal.kerf is None
    assert [f.code for f in cal.findings] == ["calibration-no-kerf-cuts"]


def test_confidence_intervals_cover_at_the_nominal_rate():
    # 95% t interval (Student's t, n - p dof) covers the true value in ~95% of seeded trials
    trials, hits = 300, 0
    for seed in range(trials):
        cal = calibrate(synthetic(10, 0, 0.05, seed=1000 + seed), JOB)
        t = stats.t.ppf(0.975, cal.kerf.dof)
        hits += abs(cal.kerf.estimate[0] - TRUE_BASE) < t * cal.kerf.stderr[0]
    # binomial sd sqrt(0.95 * 0.05 / 300) = 0.0126: accept 4 sd
    assert abs(hits / trials - 0.95) < 4 * 0.0126
    hits = 0
    for seed in range(trials):
        cal = calibrate(synthetic(0, 6, 0.05, seed=5000 + seed), JOB)
        t = stats.t.ppf(0.975, cal.lag.dof)
        hits += abs(cal.lag.estimate[0] - TRUE_LAG) < t * cal.lag.stderr[0]
    assert abs(hits / trials - 0.95) < 4 * 0.0126


def test_toml_lines_load_as_a_profile():
    cal = calibrate(synthetic(15, 12, 0.04, seed=7), JOB)
    data = tomllib.loads("\n".join(cal.toml_lines()))
    job = parse_job(data)
    assert job.wire.kerf_base_mm == pytest.approx(cal.kerf.estimate[0], rel=1e-3)  # 4 digits
    assert job.wire.kerf_speed_coeff_mm2_s == pytest.approx(cal.kerf.estimate[1], rel=1e-3)
    assert job.wire.lag_ref_mm == pytest.approx(cal.lag.estimate[0], rel=1e-3)
    assert job.wire.lag_ref_width_mm == JOB.wire.lag_ref_width_mm


def test_negative_constant_is_written_as_zero_with_a_finding():
    # kerf falling with 1/v (a coefficient below zero) is unphysical: the profile refuses < 0
    v = np.array([2.0, 3.0, 4.0, 6.0])
    cuts = TestCuts(np.array(["kerf"] * 4), v, 1.5 - 0.4 / v, np.full(4, np.nan), np.arange(4))
    cal = calibrate(cuts, JOB)
    assert cal.kerf.estimate[1] == pytest.approx(-0.4, abs=1e-9)  # exact data: exact fit
    assert "calibration-negative-constant" in [f.code for f in cal.findings]
    job = parse_job(tomllib.loads("\n".join(cal.toml_lines())))
    assert job.wire.kerf_speed_coeff_mm2_s == 0.0


def test_read_csv_and_plot(tmp_path):
    csv = tmp_path / "cuts.csv"
    csv.write_text(
        "# slot and corner cuts, EPS 20\n"
        "kind,speed_mm_s,measured_mm,width_mm\n"
        "kerf,2.0,1.52,\n"
        "kerf,3.0,1.31,\n"
        "\n"
        "kerf,5.0,1.13,\n"
        "kerf,8.0,1.05,\n"
        "lag,3.0,1.6,1000\n"
        "LAG,5.0,2.4,800\n",
        encoding="utf-8",
    )
    cuts = read_test_cuts(csv)
    assert list(cuts.kind) == ["kerf"] * 4 + ["lag"] * 2
    assert list(cuts.line) == [3, 4, 6, 7, 8, 9]  # file line numbers, comment and blank skipped
    cal = calibrate(cuts, JOB)
    png = cal.write_plot(tmp_path / "fit.png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)


@pytest.mark.parametrize(
    "text, words",
    [
        ("kind,speed_mm_s\nkerf,2\n", "lacks the column 'measured_mm'"),
        ("kind,speed_mm_s,measured_mm,colour\nkerf,2,1,red\n", "unknown column 'colour'"),
        ("kind,speed_mm_s,measured_mm\nslot,2,1.2\n", ":2: kind = 'slot'"),
        ("kind,speed_mm_s,measured_mm\nkerf,fast,1.2\n", "speed_mm_s = 'fast' is not a number"),
        ("kind,speed_mm_s,measured_mm\nkerf,-2,1.2\n", "speed_mm_s = -2 must be > 0"),
        ("kind,speed_mm_s,measured_mm\nkerf,2,nan\n", "must be finite"),
        ("kind,speed_mm_s,measured_mm\nkerf,2,0\n", "measured_mm = 0 must be > 0"),
        ("kind,speed_mm_s,measured_mm,width_mm\nlag,2,1.0,\n", "needs width_mm"),
        ("kind,speed_mm_s,measured_mm\nkerf,2,1,3,4\n", "5 fields, the header has 3"),
        ("kind,speed_mm_s,measured_mm\n", "no test cut follows"),
        ("# only a comment\n", "no header"),
    ],
)
def test_bad_rows_are_refused_with_the_line_and_column(text, words):
    with pytest.raises(JobError, match=words.replace("(", r"\(").replace(")", r"\)")):
        parse_test_cuts(text, source="cuts.csv")


@pytest.mark.parametrize(
    "text, words",
    [
        ("kind,speed_mm_s,measured_mm\nkerf,2,1.2\nkerf,3,1.1\n", "at least 3 kerf cuts"),
        ("kind,speed_mm_s,measured_mm\nkerf,2,1.2\nkerf,2,1.1\nkerf,2,1.3\n", "2 or more speeds"),
        ("kind,speed_mm_s,measured_mm,width_mm\nlag,2,1.2,900\n", "at least 2 lag cuts"),
        ("kind,speed_mm_s,measured_mm,width_mm\nlag,2,1,900\nlag,3,1,1700\n", "width_mm = 1700"),
    ],
)
def test_too_few_or_impossible_cuts_are_refused(text, words):
    with pytest.raises(JobError, match=words):
        calibrate(parse_test_cuts(text), JOB)


def test_missing_file_is_a_job_error(tmp_path):
    with pytest.raises(JobError, match="does not exist"):
        read_test_cuts(tmp_path / "nope.csv")
