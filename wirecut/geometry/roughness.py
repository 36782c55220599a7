"""Roughness of a mesh at its own scale: how far its vertices scatter about smooth local fits.

A scanned surface, a sculpted one or a jittery export carries noise from vertex to vertex that
no straight wire can follow: every piece keeps it whole, and it takes its share of the tolerance
before the wire's own error begins. The split then narrows the pieces to make room for it
(0.1 mm of noise on a 6 m x 3 m panel took 60 pieces where the clean panel takes 42), which
cannot help. This module measures that noise, so that ``check`` and ``plan`` can say so.

Method
    At each sampled vertex, its 2-ring (at most 32 neighbours), with the vertex itself as an
    observation at the origin, is fitted by least squares in the tangent frame of its normal
    with a full cubic ``h = c0 + c1 u + c2 v + c3 u^2 + c4 u v + c5 v^2 + c6 u^3 + c7 u^2 v +
    c8 u v^2 + c9 v^3`` (p = 10 terms; a quadric alone read a smooth sine wave of 1 m
    wavelength and 120 mm amplitude, meshed at 25 mm, 0.15 mm rough). If the surface is
    locally that cubic plus independent noise of variance sigma^2 along the
    normal, the residual mean square ``s^2 = RSS / (n - p)`` of the n observations is an
    unbiased estimate of sigma^2 (Gauss-Markov; Seber and Lee, *Linear Regression Analysis*,
    2nd ed., 2003, sec. 3.3), and for normal noise ``(n - p) s^2 / sigma^2`` follows the
    chi-square law with ``nu = n - p`` degrees of freedom.

    The mesh's figure is the median over the samples of ``s_i^2 / m(nu_i)``, with
    ``m(nu) = (1 - 2 / (9 nu))^3`` the median of ``chi^2_nu / nu`` by the Wilson-Hilferty
    approximation (Wilson and Hilferty 1931, "The distribution of chi-square", PNAS 17): a
    median, so that the few vertices where a cubic does not fit (corners, the edges of a
    part, creases the curvature's crease cut has not already split) do not count. Vertices
    with fewer than 15 neighbours (nu < 6) are left out.

    A smooth surface adds the cubic's misfit, its quartic terms: a tessellation whose vertices
    lie on a cylinder of radius R, at chord height c, reads about ``17 c^2 / R`` (measured in
    the tests: 0.012 mm at c = 0.6 mm, R = 0.5 m), a few microns for a common export. A mesh
    whose vertices leave the smooth surface, long facets subdivided flat for instance, reads
    about an eighth of its chord height: it is faceted at that scale, and the finding says so.

What it does not see
    Noise over a minority of the surface (a scanned patch on a clean model) does not move the
    median; noise along the surface (a sliding vertex) is not noise of its shape.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

__all__ = ["Roughness", "mesh_roughness", "roughness_finding", "ROUGH_SHARE", "SAMPLES"]

#: Vertices sampled at most (evenly along the index): the figure is a median, and 10 000
#: samples fix it to about half a per cent whatever the mesh's size (the median's standard
#: error, 1.25 sd / sqrt(N), with sd(s^2) / sigma^2 = sqrt(2 / nu) for nu about 9).
SAMPLES = 10_000
#: Noise whose three standard deviations (where 99.7 % of normal noise falls) exceed this
#: share of the tolerance is worth a finding: a sigma of tolerance / 6.
ROUGH_SHARE = 0.5
_MAX_RING = 32
_MIN_RING = 15
_P = 10  # terms of the full cubic


@dataclass(frozen=True)
class Roughness:
    """The scatter of a mesh's vertices along their normals about smooth local fits.

    Attributes
    ----------
    rms_mm : float, mm
        Estimated standard deviation of that scatter (NaN when no vertex could be sampled).
    samples : int
        Vertices the estimate rests on.
    """

    rms_mm: float
    samples: int

    def peak_mm(self) -> float:
        """Three standard deviations, mm: the scatter 99.7 % of normal noise stays within."""
        return 3.0 * self.rms_mm

    def eats_tolerance(self, tolerance_mm: float) -> bool:
        """True when :meth:`peak_mm` exceeds ``ROUGH_SHARE`` of ``tolerance_mm``."""
        return bool(np.isfinite(self.rms_mm) and self.peak_mm() > ROUGH_SHARE * tolerance_mm)


def _median_factor(nu: np.ndarray) -> np.ndarray:
    """Median of chi^2_nu / nu, Wilson-Hilferty: (1 - 2 / (9 nu))^3."""
    return (1.0 - 2.0 / (9.0 * nu)) ** 3


def mesh_roughness(
    vertices: np.ndarray,
    normals: np.ndarray,
    t1: np.ndarray,
    t2: np.ndarray,
    ring: sparse.csr_matrix,
    candidates: np.ndarray | None = None,
) -> Roughness:
    """The :class:`Roughness` of a mesh (see the module docstring).

    Parameters
    ----------
    vertices : (n, 3) float, mm
        Vertex positions (any frame).
    normals, t1, t2 : (n, 3) float, unit
        Each vertex's normal and two tangents completing an orthonormal frame.
    ring : (n, n) sparse
        Each vertex's neighbours (its 2-ring), as the row's column indices.
    candidates : (k,) int, optional
        Vertices that may be sampled (default: all).
    """
    from wirecut.geometry.curvature import cholesky_solve

    n = len(vertices)
    idx = np.arange(n) if candidates is None else np.asarray(candidates, np.int64)
    indptr, indices = ring.indptr, ring.indices
    count = np.minimum(np.diff(indptr)[idx], _MAX_RING) if len(idx) else idx
    idx = idx[count >= _MIN_RING]
    if len(idx) > SAMPLES:
        idx = idx[np.linspace(0, len(idx) - 1, SAMPLES).astype(np.int64)]
    if len(idx) == 0:
        return Roughness(float("nan"), 0)
    count = np.minimum(np.diff(indptr)[idx], _MAX_RING)
    r = int(count.max())
    pos = np.arange(r)[:, None]
    at = np.minimum(indptr[idx][None, :] + pos, len(indices) - 1)
    real = pos < count[None, :]
    table = np.where(real, indices[at], idx[None, :])  # padding: the vertex itself
    off = vertices[table] - vertices[idx][None, :]  # (r, m, 3)
    u = np.einsum("rmk,mk->rm", off, t1[idx])
    v = np.einsum("rmk,mk->rm", off, t2[idx])
    h = np.einsum("rmk,mk->rm", off, normals[idx])
    scale = np.sqrt((u * u + v * v).sum(axis=0) / count)
    scale = np.where(scale > 0, scale, 1.0)
    us, vs = u / scale, v / scale
    # the design's columns (p, r, m), zero at the padding; the vertex's own row (0, 0, 0)
    # adds only to the intercept
    w = real.astype(float)
    uu, uv, vv = us * us, us * vs, vs * vs
    cols = np.stack([w, us, vs, uu, uv, vv, uu * us, uu * vs, us * vv, vv * vs]) * w
    ata = np.einsum("prm,qrm->pqm", cols, cols)
    ata[0, 0] += 1.0  # the vertex itself
    atb = np.einsum("prm,rm->pm", cols, h * w)
    ata[np.arange(_P), np.arange(_P)] += 1e-12
    coef = cholesky_solve(ata, atb)  # (p, m)
    resid = (h - np.einsum("prm,pm->rm", cols, coef)) * w
    rss = (resid * resid).sum(axis=0) + coef[0] ** 2  # the vertex's own residual is -c0
    nu = (count + 1 - _P).astype(float)
    s2 = rss / nu / _median_factor(nu)
    return Roughness(float(np.sqrt(np.median(s2))), int(len(idx)))


def roughness_finding(roughness: Roughness | None, tolerance_mm: float):
    """The ``rough-mesh`` finding (attention) when the scatter's three standard deviations
    exceed ``ROUGH_SHARE`` of the tolerance, else None."""
    from wirecut.findings import Finding, Severity

    if roughness is None or not roughness.eats_tolerance(tolerance_mm):
        return None
    peak = roughness.peak_mm()
    return Finding(
        "rough-mesh",
        f"the mesh's vertices scatter by {roughness.rms_mm:.2f} mm RMS along their normals "
        f"about smooth local fits (noise from a scan or an export, or facets coarse for the "
        f"tolerance): no cut follows the +-{peak:.2f} mm of it, which is "
        f"{peak / tolerance_mm * 100:.0f}% of the {tolerance_mm:g} mm tolerance; "
        "smooth the mesh or export it finer",
        severity=Severity.ATTENTION,
    )
