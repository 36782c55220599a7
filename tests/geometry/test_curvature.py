"""Discrete curvature against closed-form surfaces."""

from __future__ import annotations

import numpy as np
import pytest
import trimesh
from shapes import cone, cylinder, icosphere, saddle, sphere_cap

from wirecut.config import default_job
from wirecut.geometry.curvature import (
    angle_defects,
    cholesky_solve,
    mixed_areas,
    vertex_curvature,
)
from wirecut.geometry.mesh import target_from_arrays

JOB = default_job()
C = 2000.0  # saddle z = x y / C, mm


def _curv(v, f):
    target, _ = target_from_arrays(v, f, JOB)
    return target, vertex_curvature(target)


def test_saddle_gaussian_curvature():
    target, cu = _curv(*saddle(c=C, half=500.0, n=101))
    x, y = target.vertices[:, 0], target.vertices[:, 1]
    # graph z = f(x, y): K = (f_xx f_yy - f_xy^2) / (1 + f_x^2 + f_y^2)^2; for f = x y / c this is
    # K = -c^2 / (c^2 + x^2 + y^2)^2 (do Carmo, Differential Geometry of Curves and Surfaces, 3-3)
    expected = -(C**2) / (C**2 + x**2 + y**2) ** 2
    i = cu.interior
    assert i.sum() == 99 * 99  # the 101 x 101 grid minus its boundary ring
    assert np.isnan(cu.gaussian[~i]).all()
    assert np.abs(cu.gaussian[i] / expected[i] - 1).max() < 0.02
    # the quadric fit agrees: k1 k2 = K
    assert np.abs(cu.k1[i] * cu.k2[i] / expected[i] - 1).max() < 0.02


def test_saddle_asymptotic_directions_are_the_rulings():
    target, cu = _curv(*saddle(c=C, half=500.0, n=101))
    x, y = target.vertices[:, 0], target.vertices[:, 1]
    # z = x y / c holds the lines y = const, direction (1, 0, y/c), and x = const, (0, 1, x/c)
    # (a doubly ruled surface, do Carmo 3-5); those are its asymptotic directions
    r1 = np.column_stack([np.ones_like(x), np.zeros_like(x), y / C])
    r2 = np.column_stack([np.zeros_like(x), np.ones_like(x), x / C])
    r1 /= np.linalg.norm(r1, axis=1, keepdims=True)
    r2 /= np.linalg.norm(r2, axis=1, keepdims=True)
    i = cu.interior
    a = cu.asymptotic[i]
    c1 = np.abs(np.einsum("kad,kd->ka", a, r1[i])).max(axis=1)
    c2 = np.abs(np.einsum("kad,kd->ka", a, r2[i])).max(axis=1)
    assert np.minimum(c1, c2).min() > np.cos(np.radians(0.5))


@pytest.mark.parametrize("radius", [400.0, 1000.0])
def test_sphere_cap_curvatures(radius):
    target, cu = _curv(*sphere_cap(radius, 0.3 * radius, 61))
    i = cu.interior
    # sphere of radius R: K = 1 / R^2, k1 = k2 = 1/R in magnitude (do Carmo 3-2)
    assert np.abs(cu.gaussian[i] * radius**2 - 1).max() < 0.02
    # normals toward the waste side (outward, up) and a crest: both negative by our sign rule
    assert np.abs(cu.k1[i] * radius + 1).max() < 0.02
    assert np.abs(cu.k2[i] * radius + 1).max() < 0.02
    assert np.isnan(cu.asymptotic[i]).all()


def test_icosphere_gaussian_curvature():
    v, f = icosphere(1000.0, 5)
    target, cu = _curv(v, f)
    i = cu.interior
    # K = 1 / R^2 (do Carmo 3-2)
    assert np.abs(cu.gaussian[i] * 1e6 - 1).max() < 0.02


@pytest.mark.parametrize("shape", ["cylinder", "cone"])
def test_developable_shapes_have_zero_gaussian_curvature(shape):
    if shape == "cylinder":
        v, f = cylinder(300.0, 1000.0, 61, 41)
    else:
        v, f = cone(200.0, 400.0, 1000.0, 61, 41)
    target, cu = _curv(v, f)
    i = cu.interior
    # cylinders and cones are developable: K = 0 (do Carmo 3-5); the grid quads between two
    # rulings are planar, so the discrete defect vanishes up to round-off
    assert np.abs(cu.gaussian[i]).max() < 1e-12
    if shape == "cylinder":
        # principal curvatures 0 along the rulings and -1/R across (crest seen from above)
        assert np.abs(cu.k1[i]).max() < 1e-5
        assert np.abs(cu.k2[i] * 300.0 + 1).max() < 0.02
        assert np.abs(cu.dir1[i, 0]).min() > 0.999  # rulings run along x


def _box():
    m = trimesh.creation.box(extents=(300.0, 200.0, 100.0))
    return np.asarray(m.vertices), np.asarray(m.faces)


def _lumpy_sphere():
    v, f = icosphere(500.0, 3)
    rng = np.random.default_rng(42)
    scale = 1.0 + 0.2 * rng.random(len(v))  # star-shaped, so still a genus-0 surface
    return v * scale[:, None], f


@pytest.mark.parametrize("build", [lambda: icosphere(700.0, 4), _box, _lumpy_sphere])
def test_gauss_bonnet_total_defect(build):
    v, f = build()
    # sum of angle defects of a closed polyhedral surface = 2 pi chi = 4 pi for genus 0
    # (Descartes' theorem on total angular defect; discrete Gauss-Bonnet)
    assert angle_defects(v, f).sum() == pytest.approx(4 * np.pi, abs=1e-9)


def test_mixed_areas_partition_the_surface():
    v, f = _lumpy_sphere()
    area = trimesh.Trimesh(v, f, process=False).area
    # the mixed Voronoi cells tile the surface (Meyer et al. 2003, sec. 3.3)
    assert mixed_areas(v, f).sum() == pytest.approx(area, rel=1e-12)


def test_patch_curvature_calms_an_irregular_developable_mesh():
    from shapes import jittered_graph

    # a sine profile extruded along y is developable: K = 0 everywhere (do Carmo 3-5)
    v, f = jittered_graph(
        lambda x, y: 120.0 * np.sin(2 * np.pi * x / 1000.0), 1500.0, 700.0, 121, 41
    )
    target, cu = _curv(v, f)
    i = cu.interior & np.isfinite(cu.gaussian_patch)
    noise_vertex = np.percentile(np.abs(cu.gaussian[i]), 95)
    noise_patch = np.percentile(np.abs(cu.gaussian_patch[i]), 95)
    # the per-vertex defect is crumpled by the jitter; the Gauss-Bonnet patch sum cancels most
    assert noise_patch < noise_vertex / 4
    # against the profile curvature k = 120 (2 pi / 1000)^2 = 4.7e-3 / mm: K / k^2 (the implied
    # curvature along the rulings relative to k) stays under 1 %
    assert noise_patch < 1e-2 * (120 * (2 * np.pi / 1000.0) ** 2) ** 2


def test_cholesky_solve_matches_numpy_on_a_stack_of_systems():
    # numpy.linalg.solve (LAPACK's LU with partial pivoting) as the reference, on symmetric
    # positive definite systems of the fit's size, well and badly conditioned
    rng = np.random.default_rng(7)
    n, m = 9, 400
    x = rng.normal(size=(m, 30, n)) * np.geomspace(1.0, 1e-3, n)
    a = np.einsum("mri,mrj->mij", x, x) + 1e-9 * np.eye(n)
    b = rng.normal(size=(m, n))
    want = np.linalg.solve(a, b[:, :, None])[:, :, 0]
    got = cholesky_solve(np.ascontiguousarray(a.transpose(1, 2, 0)), b.T.copy()).T
    cond = np.linalg.cond(a)
    err = np.abs(got - want).max(axis=1) / np.abs(want).max(axis=1)
    assert np.all(err < 1e-13 * cond)
    assert np.median(err) < 1e-9
    # the upper triangle is never read
    upper = np.ascontiguousarray(a.transpose(1, 2, 0))
    upper[np.triu_indices(n, 1)] = np.nan
    assert np.allclose(cholesky_solve(upper, b.T.copy()).T, want, rtol=1e-6, atol=0)


def test_cholesky_solve_singular_system_gives_no_nan():
    a = np.zeros((3, 3, 2))
    a[0, 0] = 1.0  # rank one: the other pivots are held instead of square roots of negatives
    b = np.ones((3, 2))
    assert np.all(np.isfinite(cholesky_solve(a, b)))


def _folded(n_x: int = 61, fold_mm: float = 150.0, rise: float = 40.0, amp: float = 60.0):
    """A folded plate z = amp sin(pi x / L) + rise * tri(y / fold): facets z = f(x) + c y,
    c = +-rise / fold, meeting in curved folds along x every ``fold`` mm."""
    length = 1800.0
    xs = np.linspace(0.0, length, n_x)
    ys = np.linspace(0.0, 4 * fold_mm, 4 * 15 + 1)
    gx, gy = np.meshgrid(xs, ys, indexing="ij")
    tri = np.abs(((gy / fold_mm) % 2.0) - 1.0)
    gz = 200.0 + amp * np.sin(np.pi * gx / length) + rise * tri
    v = np.column_stack([gx.ravel(), gy.ravel(), gz.ravel()])
    idx = np.arange(len(xs) * len(ys)).reshape(len(xs), len(ys))
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    f = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    return v, f, length, amp, rise / fold_mm


def test_a_fold_does_not_bend_its_facets():
    # each facet z = f(x) + c y is a cylinder: K = 0 and the one principal curvature is
    # (1 + c^2) f'' / (1 + f'^2 + c^2)^(3/2) (mean curvature of a graph, do Carmo sec. 3-3);
    # at x = L / 2, f' = 0: |k| = amp (pi / L)^2 / sqrt(1 + c^2). Vertices beside a fold
    # must read their own facet's, not a blend of both (which a fit across the fold gives)
    v, f, length, amp, c = _folded()
    target, cu = _curv(v, f)
    mid = np.isclose(v[:, 0], length / 2)
    interior = mid & (v[:, 1] > 1.0) & (v[:, 1] < v[:, 1].max() - 1.0)
    expected = amp * (np.pi / length) ** 2 / np.sqrt(1.0 + c * c)
    big = np.maximum(np.abs(cu.k1), np.abs(cu.k2))[interior]
    small = np.minimum(np.abs(cu.k1), np.abs(cu.k2))[interior]
    assert np.allclose(big, expected, rtol=0.02)
    assert np.all(small < 0.02 * expected)
    # the patch Gaussian curvature beside the folds stays that of a developable facet
    assert np.nanmax(np.abs(cu.gaussian_patch[interior])) < 1e-3 * expected**2
    # the angle defects are the mesh's own, folds included: Gaussian curvature is unchanged
    assert np.array_equal(cu.gaussian, _curv_uncut(target).gaussian, equal_nan=True)


def _curv_uncut(target):
    import wirecut.geometry.creases as creases

    was = creases.CREASE_SHARE
    creases.CREASE_SHARE = -1.0  # every mesh taken for a smooth tessellation
    creases.crease_sides.forget(target)
    try:
        return vertex_curvature(target)
    finally:
        creases.CREASE_SHARE = was
        creases.crease_sides.forget(target)


def test_a_fit_across_the_fold_is_what_the_cut_avoids():
    # the comparison: without the cut, the vertices beside the folds read curvatures many
    # times the facet's own
    v, f, length, amp, c = _folded()
    target, _ = _curv(v, f)
    cu = _curv_uncut(target)
    beside = np.isclose(v[:, 1] % 150.0, 10.0)  # one row from a fold
    expected = amp * (np.pi / length) ** 2 / np.sqrt(1.0 + c * c)
    assert np.median(np.maximum(np.abs(cu.k1), np.abs(cu.k2))[beside]) > 5 * expected


def test_a_coarse_smooth_mesh_is_not_cut_open():
    # an icosphere of 80 faces bends about 20 deg at every edge: a tessellation, not creases
    # (CREASE_SHARE), so it is fitted as before
    from wirecut.geometry.curvature import _crease_cut

    v, f = icosphere(700.0, 1)
    target, _ = target_from_arrays(v, f, JOB)
    assert _crease_cut(target) is None
