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


def hip_roof(half_length: float, half_width: float, pitch_deg: float, n: int = 21):
    """Vertices (k, 3) mm and faces of a hipped roof over the rectangle |x| <= half_length,
    |y| <= half_width: four planar faces of ``pitch_deg`` rising from the eaves (z = 300) to a
    ridge along x, each a bilinear grid of its corners (n points along the hips) sharing its
    edges with its neighbours, normals up. A long face's horizontal lines run along x, an
    end face's along y."""
    lx, wy, z0 = float(half_length), float(half_width), 300.0
    h = wy * np.tan(np.radians(pitch_deg))
    r = lx - wy  # half the ridge's length

    def patch(a, b, c, d, ns, nt):
        s = np.linspace(0.0, 1.0, ns)[:, None, None]
        t = np.linspace(0.0, 1.0, nt)[None, :, None]
        a, b, c, d = (np.asarray(p, float) for p in (a, b, c, d))
        pts = ((1 - t) * ((1 - s) * a + s * b) + t * ((1 - s) * d + s * c)).reshape(-1, 3)
        i, j = np.meshgrid(np.arange(ns - 1), np.arange(nt - 1), indexing="ij")
        p0 = (i * nt + j).ravel()
        f = np.vstack([np.column_stack([p0, p0 + nt, p0 + nt + 1]),
                       np.column_stack([p0, p0 + nt + 1, p0 + 1])])  # fmt: skip
        return pts, f

    top = z0 + h
    faces = [
        patch((-lx, -wy, z0), (lx, -wy, z0), (r, 0, top), (-r, 0, top), 3 * n, n),
        patch((lx, wy, z0), (-lx, wy, z0), (-r, 0, top), (r, 0, top), 3 * n, n),
        patch((lx, -wy, z0), (lx, wy, z0), (r, 0, top), (r, 0, top), 2 * n, n),
        patch((-lx, wy, z0), (-lx, -wy, z0), (-r, 0, top), (-r, 0, top), 2 * n, n),
    ]
    verts, tris, off = [], [], 0
    for pts, f in faces:
        verts.append(pts)
        tris.append(f + off)
        off += len(pts)
    return np.vstack(verts), np.vstack(tris)
