"""Test surfaces whose curvature and wire reach are known by construction (part frame, mm)."""

from __future__ import annotations

import numpy as np
import trimesh

__all__ = [
    "grid_faces",
    "graph_surface",
    "jittered_graph",
    "saddle",
    "sphere_cap",
    "cylinder",
    "cone",
    "icosphere",
]


def grid_faces(nu: int, nv: int) -> np.ndarray:
    """(2 (nu-1)(nv-1), 3) int: triangles of an nu x nv vertex grid, row-major, one diagonal."""
    i, j = np.meshgrid(np.arange(nu - 1), np.arange(nv - 1), indexing="ij")
    a = (i * nv + j).ravel()
    b, c, d = a + nv, a + nv + 1, a + 1
    return np.concatenate([np.column_stack([a, b, c]), np.column_stack([a, c, d])])


def graph_surface(fn, half: float, n: int) -> tuple[np.ndarray, np.ndarray]:
    """z = fn(x, y) on the square [-half, half]^2 with n x n vertices (upward normals)."""
    x, y = np.meshgrid(np.linspace(-half, half, n), np.linspace(-half, half, n), indexing="ij")
    v = np.column_stack([x.ravel(), y.ravel(), fn(x, y).ravel()])
    return v, grid_faces(n, n)


def saddle(c: float = 2000.0, half: float = 500.0, n: int = 101):
    """Hyperbolic paraboloid z = x y / c (doubly ruled: lines x = const and y = const)."""
    return graph_surface(lambda x, y: x * y / c, half, n)


def sphere_cap(radius: float, half: float, n: int):
    """Upper spherical cap z = sqrt(R^2 - x^2 - y^2) over a square of half-width ``half``."""
    return graph_surface(lambda x, y: np.sqrt(radius**2 - x**2 - y**2), half, n)


def cylinder(radius: float, length: float, n_around: int, n_along: int, arc: float = np.pi):
    """Upper part of a cylinder about the x axis (rulings along x), angular span ``arc``."""
    t = np.linspace(np.pi / 2 - arc / 2, np.pi / 2 + arc / 2, n_around)
    x = np.linspace(-length / 2, length / 2, n_along)
    tt, xx = np.meshgrid(t, x, indexing="ij")
    v = np.column_stack([xx.ravel(), radius * np.cos(tt).ravel(), radius * np.sin(tt).ravel()])
    return v, grid_faces(n_around, n_along)


def cone(r0: float, r1: float, length: float, n_around: int, n_along: int, arc: float = np.pi):
    """Upper part of a truncated cone about the x axis, radius r0 at x=0 to r1 at x=length."""
    t = np.linspace(np.pi / 2 - arc / 2, np.pi / 2 + arc / 2, n_around)
    s = np.linspace(0.0, 1.0, n_along)
    tt, ss = np.meshgrid(t, s, indexing="ij")
    r = r0 + (r1 - r0) * ss
    v = np.column_stack([(ss * length).ravel(), (r * np.cos(tt)).ravel(), (r * np.sin(tt)).ravel()])
    return v, grid_faces(n_around, n_along)


def icosphere(radius: float, subdivisions: int):
    """Closed icosphere (trimesh.creation.icosphere) scaled to ``radius``."""
    m = trimesh.creation.icosphere(subdivisions=subdivisions, radius=radius)
    return np.asarray(m.vertices), np.asarray(m.faces)


def jittered_graph(fn, half_x: float, half_y: float, nx: int, ny: int, seed: int = 3):
    """z = fn(x, y) on a grid whose interior vertices are shifted in plan by a seeded jitter of
    up to 0.3 grid steps, triangulated by Delaunay in plan (irregular, every vertex on the
    surface)."""
    from scipy.spatial import Delaunay

    x, y = np.meshgrid(np.linspace(-half_x, half_x, nx), np.linspace(-half_y, half_y, ny))
    dx, dy = 2 * half_x / (nx - 1), 2 * half_y / (ny - 1)
    rng = np.random.default_rng(seed)
    inner = (np.abs(x) < half_x - 1e-9) & (np.abs(y) < half_y - 1e-9)
    x = x + inner * rng.uniform(-0.3, 0.3, x.shape) * dx
    y = y + inner * rng.uniform(-0.3, 0.3, y.shape) * dy
    xy = np.column_stack([x.ravel(), y.ravel()])
    faces = Delaunay(xy).simplices
    return np.column_stack([xy, fn(xy[:, 0], xy[:, 1])]), faces
