"""Height-field meshes whose answers are known by construction."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from wirecut.config import JobProfile, PieceRules
from wirecut.geometry.mesh import target_from_arrays


def grid_mesh(xs: np.ndarray, ys: np.ndarray, height) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (n, 3) mm and faces (m, 3) of the height field z = height(x, y) on a grid,
    two triangles per cell, wound counter-clockwise seen from +z (normal up)."""
    X, Y = np.meshgrid(xs, ys, indexing="ij")
    v = np.column_stack([X.ravel(), Y.ravel(), height(X, Y).ravel()])
    idx = np.arange(len(xs) * len(ys)).reshape(len(xs), len(ys))
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    f = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    return v, f


def height_target(xs, ys, height, job: JobProfile | None = None):
    job = job or quick_job()
    v, f = grid_mesh(np.asarray(xs, float), np.asarray(ys, float), height)
    target, _ = target_from_arrays(v, f, job)
    return target


def quick_job(**pieces) -> JobProfile:
    rules = replace(PieceRules(), min_width_mm=50.0, **pieces)
    return replace(JobProfile(), pieces=rules)


def _patch(a, b, c, d, ns: int, nt: int):
    """Vertices (ns nt, 3) and faces of the bilinear grid of the quad a b c d (s from a to b,
    t from the edge a b to the edge d c): planar when its corners are, a triangle when c = d."""
    s = np.linspace(0.0, 1.0, ns)[:, None, None]
    t = np.linspace(0.0, 1.0, nt)[None, :, None]
    a, b, c, d = (np.asarray(p, float) for p in (a, b, c, d))
    pts = ((1 - t) * ((1 - s) * a + s * b) + t * ((1 - s) * d + s * c)).reshape(-1, 3)
    i, j = np.meshgrid(np.arange(ns - 1), np.arange(nt - 1), indexing="ij")
    p0 = (i * nt + j).ravel()
    f = np.vstack([np.column_stack([p0, p0 + nt, p0 + nt + 1]),
                   np.column_stack([p0, p0 + nt + 1, p0 + 1])])  # fmt: skip
    return pts, f


def _joined(patches) -> tuple[np.ndarray, np.ndarray]:
    verts, tris, off = [], [], 0
    for pts, f in patches:
        verts.append(pts)
        tris.append(f + off)
        off += len(pts)
    return np.vstack(verts), np.vstack(tris)


def hip_roof(half_length: float, half_width: float, pitch_deg: float, n: int = 21):
    """Vertices (k, 3) mm and faces of a hipped roof over the rectangle |x| <= half_length,
    |y| <= half_width: four planar faces of ``pitch_deg`` rising from the eaves (z = 300) to a
    ridge along x, each a bilinear grid of its corners (n points along the hips) sharing its
    edges with its neighbours, normals up. A long face's horizontal lines run along x, an
    end face's along y."""
    lx, wy, z0 = float(half_length), float(half_width), 300.0
    top = z0 + wy * np.tan(np.radians(pitch_deg))
    r = lx - wy  # half the ridge's length
    return _joined([
        _patch((-lx, -wy, z0), (lx, -wy, z0), (r, 0, top), (-r, 0, top), 3 * n, n),
        _patch((lx, wy, z0), (-lx, wy, z0), (-r, 0, top), (r, 0, top), 3 * n, n),
        _patch((lx, -wy, z0), (lx, wy, z0), (r, 0, top), (r, 0, top), 2 * n, n),
        _patch((-lx, wy, z0), (-lx, -wy, z0), (-r, 0, top), (-r, 0, top), 2 * n, n),
    ])  # fmt: skip


def coffer_plate(outer=(1000.0, 750.0), rim=(660.0, 410.0), floor=(600.0, 350.0), depth=60.0):
    """Vertices and faces of a flat plate (z = 300, half sizes ``outer``) with a coffer: a
    recess ``depth`` deep whose floor (half sizes ``floor``) is ringed by four planar chamfers
    up to the rim (half sizes ``rim``), meshed as CAD exports it, every crease an edge: the
    plate, the chamfers and the floor each a bilinear grid sharing its edges. The chamfers
    slope 45 deg for the defaults; each one's level lines run along its own rim edge."""
    (X, Y), (x1, y1), (x2, y2) = outer, rim, floor
    z0, zb = 300.0, 300.0 - depth
    nx, ny, nr, nr2 = 41, 25, 5, 13
    floor_v, floor_f = _patch((-x2, -y2, zb), (x2, -y2, zb), (x2, y2, zb), (-x2, y2, zb), nx, ny)
    return _joined([
        _patch((-X, -Y, z0), (X, -Y, z0), (x1, -y1, z0), (-x1, -y1, z0), nx, nr2),
        _patch((X, Y, z0), (-X, Y, z0), (-x1, y1, z0), (x1, y1, z0), nx, nr2),
        _patch((X, -Y, z0), (X, Y, z0), (x1, y1, z0), (x1, -y1, z0), ny, nr2),
        _patch((-X, Y, z0), (-X, -Y, z0), (-x1, -y1, z0), (-x1, y1, z0), ny, nr2),
        _patch((-x1, -y1, z0), (x1, -y1, z0), (x2, -y2, zb), (-x2, -y2, zb), nx, nr),
        _patch((x1, y1, z0), (-x1, y1, z0), (-x2, y2, zb), (x2, y2, zb), nx, nr),
        _patch((x1, -y1, z0), (x1, y1, z0), (x2, y2, zb), (x2, -y2, zb), ny, nr),
        _patch((-x1, y1, z0), (-x1, -y1, z0), (-x2, -y2, zb), (-x2, y2, zb), ny, nr),
        (floor_v, floor_f),
    ])  # fmt: skip
