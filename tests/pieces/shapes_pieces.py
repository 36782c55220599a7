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
