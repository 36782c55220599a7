"""Signed deviation of a ruled cut from the target samples.

For a sample at machine ``(x, y_t, z)`` the cut's height ``y_c(x, z)`` comes from the strip the
point falls in (:meth:`RuledCut.strip_of`, a vectorized bisection over the section knots) and
the exact bilinear interpolation of that strip. The vertical difference ``dy = y_c - y_t`` is
turned into a distance along the cut's normal to first order: ``signed = dy * n_y`` with
``n = S_u x S_t / |S_u x S_t|`` the unit normal of the bilinear patch at that point (a plane of
unit normal n lies at perpendicular distance ``dy * n_y`` from a point ``dy`` below it; the
error of this is of the order of ``curvature * signed^2``).

Sign convention: ``signed > 0`` is a cut on the waste side of the target (excess foam left on
the part), ``signed < 0`` a gouge into the part.

Samples whose face is undercut, and samples outside the cut (z beyond the two faces or x beyond
the section at that z) have no meaningful vertical deviation: they are never ``within``, they
are left out of max, rms and p95, and they count toward their own area fractions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.config import ToleranceSpec
from wirecut.ruled.model import RuledCut
from wirecut.ruled.sampling import TargetSamples

__all__ = [
    "CutEvaluation",
    "evaluate_cut",
    "DeviationReport",
    "report_from_signed",
    "signed_deviation",
    "weighted_quantile",
]


@dataclass(frozen=True)
class CutEvaluation:
    """The cut surface evaluated above machine points (x, z).

    Attributes
    ----------
    y : (n,) float, mm, machine frame
        Height of the cut; NaN outside.
    normal_y : (n,) float
        y component of the cut's unit normal (oriented toward +y), in (0, 1].
    slope : (n,) float
        dy/dx of the section through the point (mm/mm), machine frame.
    strip : (n,) int
        Strip index j (rulings j and j + 1).
    w : (n,) float
        Position across the strip, 0..1.
    t : (n,) float
        Ruling parameter of z, 0 at the left face and 1 at the right.
    inside : (n,) bool
        True where the point lies between the two faces and within the section.
    """

    y: np.ndarray
    normal_y: np.ndarray
    slope: np.ndarray
    strip: np.ndarray
    w: np.ndarray
    t: np.ndarray
    inside: np.ndarray


def evaluate_cut(cut: RuledCut, x: np.ndarray, z: np.ndarray) -> CutEvaluation:
    """Height, normal and strip of ``cut`` above machine points ``x, z`` ((n,) mm each)."""
    j, w, t, inside = cut.strip_of(x, z)
    inside &= (t >= -1e-12) & (t <= 1.0 + 1e-12)
    lx, ly = cut.left[:, 0], cut.left[:, 1]
    rx, ry = cut.right[:, 0], cut.right[:, 1]
    dlx, dly = rx - lx, ry - ly  # ruling directions in (x, y) per unit t
    j1 = j + 1
    x0 = lx[j] + t * dlx[j]
    y0 = ly[j] + t * dly[j]
    sux = lx[j1] + t * dlx[j1] - x0  # along the section, dz = 0
    suy = ly[j1] + t * dly[j1] - y0
    stx = dlx[j] + w * (dlx[j1] - dlx[j])
    sty = dly[j] + w * (dly[j1] - dly[j])
    dz = cut.z_right - cut.z_left
    # n = S_u x S_t oriented to +y: (-suy dz, sux dz, suy stx - sux sty)
    nz = suy * stx - sux * sty
    norm = np.sqrt((suy * dz) ** 2 + (sux * dz) ** 2 + nz * nz)
    normal_y = np.where(norm > 0, sux * dz / np.where(norm > 0, norm, 1.0), 1.0)
    y = y0 + w * suy
    slope = suy / np.where(sux > 0, sux, 1.0)
    return CutEvaluation(np.where(inside, y, np.nan), normal_y, slope, j, w, t, inside)


def weighted_quantile(values: np.ndarray, weights: np.ndarray, q: float) -> float:
    """The q-quantile (0..1) of ``values`` weighted by ``weights`` (lower interpolation);
    unweighted when every weight is zero. NaN for no values."""
    v = np.asarray(values, float)
    if len(v) == 0:
        return float("nan")
    w = np.asarray(weights, float)
    if not np.any(w > 0):
        w = np.ones_like(v)
    order = np.argsort(v, kind="stable")
    cw = np.cumsum(w[order])
    i = int(np.searchsorted(cw, q * cw[-1], side="left"))
    return float(v[order[min(i, len(v) - 1)]])


@dataclass(frozen=True)
class DeviationReport:
    """How far a cut lies from the target samples.

    Attributes
    ----------
    signed : (n,) float, mm
        Normal deviation per sample (+ waste side / excess, - gouge); NaN outside the cut.
    within : (n,) bool
        ``|signed| <= tol``, not undercut and inside the cut.
    undercut : (n,) bool
        The sample's face cannot be reached from the waste side.
    outside : (n,) bool
        The sample lies outside the cut (beyond a face or beyond the section).
    tolerance_mm : float
        The tolerance the fractions are taken against, mm.
    max_abs_mm, rms_mm, p95_mm : float
        Max, area-weighted rms and area-weighted 95th percentile of ``|signed|`` over the
        samples that are inside the cut and not undercut, mm (0 when there are none).
    max_excess_mm, max_gouge_mm : float
        Largest positive and largest negative-magnitude deviation, mm (both >= 0).
    gouge_area_fraction, excess_area_fraction : float
        Area share with ``signed < -tol`` and ``signed > tol``.
    undercut_area_fraction, outside_area_fraction, feasible_area_fraction : float
        Area shares undercut, outside the cut and ``within``.
    area_mm2 : float
        Total sample area, mm^2.
    """

    signed: np.ndarray
    within: np.ndarray
    undercut: np.ndarray
    outside: np.ndarray
    tolerance_mm: float
    max_abs_mm: float
    rms_mm: float
    p95_mm: float
    max_excess_mm: float
    max_gouge_mm: float
    gouge_area_fraction: float
    excess_area_fraction: float
    undercut_area_fraction: float
    outside_area_fraction: float
    feasible_area_fraction: float
    area_mm2: float

    def to_json(self) -> dict:
        """The per-piece deviation keys of plan.json."""
        return {
            "max_deviation_mm": round(self.max_abs_mm, 6),
            "rms_deviation_mm": round(self.rms_mm, 6),
            "gouge_area_fraction": round(self.gouge_area_fraction, 6),
            "undercut_area_fraction": round(self.undercut_area_fraction, 6),
            "feasible_area_fraction": round(self.feasible_area_fraction, 6),
        }


def _tolerance_mm(tolerance: ToleranceSpec | float) -> float:
    if isinstance(tolerance, ToleranceSpec):
        return float(tolerance.surface_mm)
    return float(tolerance)


def report_from_signed(
    signed: np.ndarray,
    weights: np.ndarray,
    undercut: np.ndarray,
    outside: np.ndarray,
    tolerance: ToleranceSpec | float,
) -> DeviationReport:
    """Build the report from per-sample signed deviations ((n,) mm, NaN where outside)."""
    tol = _tolerance_mm(tolerance)
    signed = np.asarray(signed, float)
    weights = np.asarray(weights, float)
    undercut = np.asarray(undercut, bool)
    outside = np.asarray(outside, bool) | ~np.isfinite(signed)
    valid = ~outside & ~undercut
    within = valid & (np.abs(np.where(valid, signed, 0.0)) <= tol)
    area = float(weights.sum())
    scale = 1.0 / area if area > 0 else 0.0
    s = signed[valid]
    wv = weights[valid]
    if len(s):
        a = np.abs(s)
        max_abs = float(a.max())
        rms = (
            float(np.sqrt(np.average(s * s, weights=wv)))
            if wv.sum() > 0
            else float(np.sqrt(np.mean(s * s)))
        )
        p95 = weighted_quantile(a, wv, 0.95)
        max_excess = float(max(s.max(), 0.0))
        max_gouge = float(max(-s.min(), 0.0))
    else:
        max_abs = rms = p95 = max_excess = max_gouge = 0.0
    return DeviationReport(
        signed=signed,
        within=within,
        undercut=undercut,
        outside=outside,
        tolerance_mm=tol,
        max_abs_mm=max_abs,
        rms_mm=rms,
        p95_mm=p95,
        max_excess_mm=max_excess,
        max_gouge_mm=max_gouge,
        gouge_area_fraction=float(wv[s < -tol].sum() * scale),
        excess_area_fraction=float(wv[s > tol].sum() * scale),
        undercut_area_fraction=float(weights[undercut].sum() * scale),
        outside_area_fraction=float(weights[outside & ~undercut].sum() * scale),
        feasible_area_fraction=float(weights[within].sum() * scale),
        area_mm2=area,
    )


def signed_deviation(
    cut: RuledCut, samples: TargetSamples, tolerance: ToleranceSpec | float
) -> DeviationReport:
    """Signed normal deviation of ``cut`` from ``samples`` and its summary.

    Parameters
    ----------
    cut : RuledCut
        A monotone cut in the samples' machine frame.
    samples : TargetSamples
        Target samples, machine frame.
    tolerance : ToleranceSpec or float
        The surface tolerance (mm); only ``surface_mm`` is used.

    Returns
    -------
    DeviationReport
    """
    p = samples.points
    ev = evaluate_cut(cut, p[:, 0], p[:, 2])
    signed = np.where(ev.inside, (ev.y - p[:, 1]) * ev.normal_y, np.nan)
    return report_from_signed(signed, samples.weights, samples.undercut, ~ev.inside, tolerance)
