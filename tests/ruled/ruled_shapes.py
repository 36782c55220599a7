"""Shapes with known answers for the ruled-fit tests, built straight from numpy arrays.

Samples are placed exactly on the analytic surface (no facet error), in the machine frame:
x = sweep, y = height toward the waste side, z = along the wire.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.ruled.model import RuledCut
from wirecut.ruled.sampling import TargetSamples

__all__ = ["GridTarget", "height_field_samples", "ruled_samples", "grid_target"]


def height_field_samples(f, xs: np.ndarray, zs: np.ndarray, eps: float = 1e-4) -> TargetSamples:
    """Samples of y = f(x, z) on the grid xs x zs (mm), weights = surface area per node."""
    x, z = np.meshgrid(xs, zs, indexing="ij")
    x, z = x.ravel(), z.ravel()
    y = f(x, z)
    fx = (f(x + eps, z) - f(x - eps, z)) / (2 * eps)
    fz = (f(x, z + eps) - f(x, z - eps)) / (2 * eps)
    n = np.column_stack([-fx, np.ones_like(x), -fz])
    g = np.linalg.norm(n, axis=1)
    n = n / g[:, None]
    wx = np.gradient(xs) if len(xs) > 1 else np.ones(1)
    wz = np.gradient(zs) if len(zs) > 1 else np.ones(1)
    cell = np.outer(wx, wz).ravel()
    pts = np.column_stack([x, y, z])
    return TargetSamples(
        pts, n, cell * g, n[:, 1] <= 0, pts[:, [0, 2]], np.zeros(len(x), int), float(wx.max())
    )


def ruled_samples(cut: RuledCut, per_strip: int = 6, along: int = 41) -> TargetSamples:
    """Samples exactly on a piecewise-bilinear ruled surface (its own strips)."""
    k = cut.n_rulings
    u = np.linspace(0.0, 1.0, per_strip + 1)[:-1]
    t = np.linspace(0.0, 1.0, along)
    j, uu, tt = np.meshgrid(np.arange(k - 1), u, t, indexing="ij")
    j, uu, tt = j.ravel(), uu.ravel(), tt.ravel()
    lo = (1 - tt)[:, None] * cut.left[j] + tt[:, None] * cut.right[j]
    hi = (1 - tt)[:, None] * cut.left[j + 1] + tt[:, None] * cut.right[j + 1]
    xy = (1 - uu)[:, None] * lo + uu[:, None] * hi
    z = cut.z_left + tt * (cut.z_right - cut.z_left)
    pts = np.column_stack([xy, z])
    su = np.column_stack([hi - lo, np.zeros(len(z))])
    st_xy = (1 - uu)[:, None] * (cut.right[j] - cut.left[j]) + uu[:, None] * (
        cut.right[j + 1] - cut.left[j + 1]
    )
    st = np.column_stack([st_xy, np.full(len(z), cut.z_right - cut.z_left)])
    n = np.cross(su, st)
    n *= np.sign(n[:, 1])[:, None]
    area = np.linalg.norm(n, axis=1)
    n /= area[:, None]
    w = area / (per_strip * (along - 1))
    return TargetSamples(pts, n, w, n[:, 1] <= 0, pts[:, [0, 2]], j, 1.0)


@dataclass(frozen=True)
class GridTarget:
    """A TargetSurface-like triangle mesh (part frame, mm) for the sampling tests."""

    vertices: np.ndarray
    faces: np.ndarray
    face_normals: np.ndarray
    up: np.ndarray


def grid_target(f, us: np.ndarray, vs: np.ndarray) -> GridTarget:
    """Triangulated height field z = f(x, y) (part frame, up = +z) on the grid us x vs."""
    x, y = np.meshgrid(us, vs, indexing="ij")
    verts = np.column_stack([x.ravel(), y.ravel(), f(x.ravel(), y.ravel())])
    nu, nv = len(us), len(vs)
    i, j = np.meshgrid(np.arange(nu - 1), np.arange(nv - 1), indexing="ij")
    a = (i * nv + j).ravel()
    b, c = a + nv, a + 1
    d = b + 1
    faces = np.vstack([np.column_stack([a, b, d]), np.column_stack([a, d, c])])
    n = np.cross(verts[faces[:, 1]] - verts[faces[:, 0]], verts[faces[:, 2]] - verts[faces[:, 0]])
    n /= np.linalg.norm(n, axis=1)[:, None]
    n *= np.where(n[:, 2] < 0, -1.0, 1.0)[:, None]
    return GridTarget(verts, faces, n, np.array([0.0, 0.0, 1.0]))
