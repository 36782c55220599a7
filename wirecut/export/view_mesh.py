"""A coarser copy of the target for the report's 3D view: vertex clustering.

The view draws every triangle on a 2D canvas, so a mesh of a million triangles must be thinned
first; taking every k-th face would leave scattered slivers. Vertex clustering (Rossignac and
Borrel 1993, "Multi-resolution 3D approximations for rendering complex scenes") snaps the
vertices to a uniform grid of cubes, merges those sharing a cube and keeps the faces whose
three corners land in three different cubes: the surface stays closed wherever it was, at
about the cube's size of detail. A merged vertex sits at the mean of its members and carries
the member deviation of largest magnitude, so the view never shows a bad spot better than it
is (the same rule as the report's deviation pictures).
"""

from __future__ import annotations

import numpy as np

from wirecut.geometry.vectors import cross

__all__ = ["coarsened"]

#: Most cube-size trials: each makes the cubes 1.1 times larger until the faces fit.
_TRIALS = 60


def coarsened(
    vertices: np.ndarray, faces: np.ndarray, values: np.ndarray, max_faces: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Vertices (k, 3), faces (j <= max_faces, 3) and per-vertex values (k,) of a coarser mesh.

    Parameters
    ----------
    vertices : (n, 3) float, mm
    faces : (m, 3) int
    values : (n,) float
        Per-vertex values (signed deviations, mm; NaN where unknown).
    max_faces : int
        At most this many faces come back. A mesh within it is returned with its unused
        vertices dropped, otherwise unchanged.
    """
    v = np.asarray(vertices, float).reshape(-1, 3)
    f = np.asarray(faces, np.int64).reshape(-1, 3)
    val = np.asarray(values, float).reshape(-1)
    if len(f) <= max_faces:
        return _compact(v, f, val)
    lo = v.min(axis=0)
    tri = v[f]
    area = 0.5 * np.linalg.norm(cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0]), axis=1)
    # a cube of side c holds about c^2 of surface; a mesh has about two triangles per vertex
    cube = max(float(np.sqrt(area.sum() / max(max_faces / 2.0, 1.0))), 1e-9)
    for _ in range(_TRIALS):
        cell = np.floor((v - lo) / cube).astype(np.int64)
        if int(cell.max()) < 2**20:  # one key per cube: a 1D unique
            key = (cell[:, 0] << 42) | (cell[:, 1] << 21) | cell[:, 2]
            _, cluster = np.unique(key, return_inverse=True)
        else:
            _, cluster = np.unique(cell, axis=0, return_inverse=True)
        cluster = cluster.reshape(-1)
        g = cluster[f]
        distinct = (g[:, 0] != g[:, 1]) & (g[:, 1] != g[:, 2]) & (g[:, 0] != g[:, 2])
        g = g[distinct]
        _, first = np.unique(np.sort(g, axis=1), axis=0, return_index=True)
        g = g[np.sort(first)]
        if len(g) <= max_faces:
            break
        cube *= 1.1
    if len(g) > max_faces:  # only for a pathological mesh: keep the promise all the same
        g = g[:: int(np.ceil(len(g) / max(max_faces, 1)))][:max_faces]
    k = int(cluster.max()) + 1
    count = np.bincount(cluster, minlength=k).astype(float)
    mean = np.column_stack([np.bincount(cluster, v[:, j], minlength=k) for j in range(3)])
    mean /= np.maximum(count, 1.0)[:, None]
    # per cluster, the member value of largest magnitude (NaN only where every member is NaN)
    size = np.where(np.isfinite(val), np.abs(val), -1.0)
    order = np.lexsort((size, cluster))
    last = np.r_[cluster[order][1:] != cluster[order][:-1], True]
    worst = np.full(k, np.nan)
    worst[cluster[order][last]] = val[order][last]
    return _compact(mean, g, worst)


def _compact(
    v: np.ndarray, f: np.ndarray, val: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The vertices the faces use, renumbered in order."""
    used = np.flatnonzero(np.bincount(f.ravel(), minlength=len(v))) if len(f) else np.zeros(0, int)
    remap = np.full(len(v), -1, np.int64)
    remap[used] = np.arange(len(used))
    return v[used], remap[f], val[used]
