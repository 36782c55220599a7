"""Break lines: creases and steps of the target that run along the sweep.

A straight wire crossing a crease of the surface cannot follow both sides of it. Across the
wire the surface bends there by the crease's angle ``theta``; a strip that straddles the crease
by ``d`` mm on its narrower side deviates from the best straight line by about
``d tan(theta) / 2`` (the chord of a bent line, the same geometry as the sagitta). A step (a
vertical wall between two levels, ``theta = 90 deg``) cannot be straddled at all. The width
search finds the widest strip on a grid of ``resolution_mm``, so a strip ends within one grid
step before a crease and the next one straddles it by up to a step: with the default 10 mm
step and a 0.5 mm tolerance any crease sharper than about 6 deg then fails, even at the
narrowest width.

So the footprint is first cut at every crease that runs along the sweep, and the strips are
searched between those cuts. Only creases along the sweep matter: one that runs along the wire
is a ruling (the wire lies in it), and one that runs across both cannot be kept out of a strip
by any cut across the wire.

The edges come from the target's edge table (:class:`wirecut.geometry.mesh.EdgeTable`); the
dihedral angle of an edge is the angle between its two faces' normals.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from wirecut.geometry.frames import to_plan
from wirecut.geometry.per_target import PerTarget

__all__ = [
    "CREASE_DEG",
    "ALONG_SWEEP_DEG",
    "sharp_edges",
    "crease_ends",
    "crease_edges",
    "break_lines",
    "nearest_gap",
    "segments",
]

#: An inner edge whose two faces' normals differ by at least this angle is a crease. A smooth
#: surface meshed at an edge of 2 % of its radius of curvature bends 1.1 deg per edge; a crease
#: of 10 deg straddled by 10 mm is off by about 0.9 mm, more than a usual tolerance.
CREASE_DEG = 10.0
#: ... and when it bends at least this many times more than the third least bent of the four
#: edges around it (the other two edges of each of its faces). A coarse tessellation of a
#: smooth surface bends about as much at every edge but the diagonals of its quads (two of
#: the four on a grid mesh, hence the third least); a crease stands out from the faces on
#: either side, which are flat or gently curved. Boundary edges bend nowhere and are left out
#: of the four; with fewer than three left the edge is no crease. (A crease that zigzags
#: across the triangles has a crease edge among its four and is not found: its fits are
#: made across it as on a smooth surface, and it runs along neither the sweep nor the wire.)
CREASE_CONTRAST = 3.0
#: A crease counts when its plan direction lies within this angle of the sweep.
ALONG_SWEEP_DEG = 10.0
#: Crease edges closer than this across the wire (mm) belong to one break line.
_GATHER_MM = 1.0


def _sharp_edges(target: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The two face-edge positions (k,), (k,) of each inner edge (``EdgeTable.pairs``) and
    (k,) bool: whether it is a crease edge (its faces' normals differ by at least
    :data:`CREASE_DEG`). Computed once per target; the curvature's crease cut and the break
    lines share it."""
    table = getattr(target, "edge_table", None)
    if table is None or len(target.faces) == 0:
        empty = np.zeros(0, np.int64)
        return empty, empty, np.zeros(0, bool)
    first, second = table.pairs()
    normals = np.asarray(target.face_normals, float)
    fa, fb = first // 3, second // 3
    # per coordinate (gathers of contiguous columns: twice as fast as a row einsum)
    cols = [np.ascontiguousarray(normals[:, j]) for j in range(3)]
    cos = cols[0][fa] * cols[0][fb] + cols[1][fa] * cols[1][fb] + cols[2][fa] * cols[2][fb]
    bent = cos <= math.cos(math.radians(CREASE_DEG))
    if not bent.any():
        return first, second, bent
    # against the edges around it: the two other edges of each of its faces
    angle = np.arccos(np.clip(cos, -1.0, 1.0))
    at = np.full(3 * len(target.faces), np.nan)  # per face-edge position; none on the boundary
    at[first], at[second] = angle, angle
    at = at.reshape(-1, 3)
    around = []
    for pos in (first[bent], second[bent]):
        f, k = np.divmod(pos, 3)
        around += [at[f, (k + 1) % 3], at[f, (k + 2) % 3]]
    third_least = np.sort(np.column_stack(around), axis=1)[:, 2]  # NaN (unknown) sorts last
    sharp = bent.copy()
    with np.errstate(invalid="ignore"):
        sharp[bent] = angle[bent] >= CREASE_CONTRAST * third_least
    return first, second, sharp


sharp_edges = PerTarget(_sharp_edges)


def crease_ends(target: Any) -> np.ndarray:
    """The vertex indices (k, 2) of the target's crease edges (none: (0, 2))."""
    first, _, sharp = sharp_edges(target)
    if len(first) == 0 or not sharp.any():
        return np.zeros((0, 2), np.int64)
    table = target.edge_table
    return table.edges[table.counts == 2][sharp]


def _crease_edges(target: Any) -> tuple[np.ndarray, np.ndarray]:
    """The plan midpoints (k, 2) mm and plan vectors (k, 2) mm of the target's crease edges,
    computed once per target (before worker processes are forked, so that they inherit it)."""
    ends = crease_ends(target)
    if len(ends) == 0:
        return (np.zeros((0, 2)), np.zeros((0, 2)))
    up = np.asarray(target.up, float)
    p = to_plan(np.asarray(target.vertices, float)[ends[:, 0]], up)
    q = to_plan(np.asarray(target.vertices, float)[ends[:, 1]], up)
    return 0.5 * (p + q), q - p


crease_edges = PerTarget(_crease_edges)


def break_lines(target: Any, wire: np.ndarray, min_length_mm: float) -> np.ndarray:
    """Wire coordinates (k,) mm, ascending, of the creases that run along the sweep.

    Parameters
    ----------
    target : TargetSurface
        Needs ``vertices``, ``faces``, ``face_normals``, ``up`` and ``edge_table``.
    wire : (2,) float
        The wire's plan vector (:func:`wirecut.pieces.region.plan_axes`); the coordinate
        returned is ``p_plan . wire`` with it made unit, the sweep is perpendicular to it.
        Given the sweep's plan vector instead, the same function returns the sweep
        coordinates of the creases that run along the wire (a ridge or a valley the wire
        lies in: where the cut's knots go, :func:`wirecut.ruled.fit.pinned_knots`).
    min_length_mm : float
        Least plan length across ``wire`` of a line; shorter ones are left out.

    Returns
    -------
    (k,) float, mm: the length-weighted median coordinate of each line.
    """
    mid, d = crease_edges(target)
    if len(mid) == 0:
        return np.zeros(0)
    wire = np.asarray(wire, float)
    wire = wire / np.linalg.norm(wire)
    sweep = np.array([-wire[1], wire[0]])
    along = np.abs(d @ sweep)
    across = np.abs(d @ wire)
    # a vertical edge of a step wall has no plan length: only edges with plan length count
    keep = (along > 0) & (across <= along * math.tan(math.radians(ALONG_SWEEP_DEG)))
    if not keep.any():
        return np.zeros(0)
    t = mid[keep] @ wire
    length = along[keep]
    order = np.argsort(t, kind="stable")
    t, length = t[order], length[order]
    starts = np.flatnonzero(np.r_[True, np.diff(t) > _GATHER_MM])
    out = []
    for lo, hi in zip(starts, np.r_[starts[1:], len(t)], strict=True):
        w = length[lo:hi]
        # a step wall's two creases (foot and top) lie on the same line: one break line
        if w.sum() < min_length_mm:
            continue
        cum = np.cumsum(w)
        out.append(float(t[lo + int(np.searchsorted(cum, 0.5 * cum[-1]))]))
    return np.asarray(out, float)


def nearest_gap(t: np.ndarray, lines: np.ndarray) -> np.ndarray:
    """(n,) mm: the distance of each coordinate ``t`` (n,) to the nearest of the ascending
    ``lines`` (k >= 1,) (a binary search per coordinate, not an n x k table)."""
    t = np.asarray(t, float)
    lines = np.asarray(lines, float)
    i = np.searchsorted(lines, t)
    below = np.abs(t - lines[np.clip(i - 1, 0, len(lines) - 1)])
    above = np.abs(lines[np.clip(i, 0, len(lines) - 1)] - t)
    return np.minimum(below, above)


def segments(
    lo: float, hi: float, lines: np.ndarray, min_width_mm: float
) -> list[tuple[float, float]]:
    """``[lo, hi]`` cut at the break ``lines`` (mm) into segments of at least ``min_width_mm``.

    A line closer than ``min_width_mm`` to an end or to an earlier kept line is left out
    (the narrowest strip could not end there without straddling it anyway)."""
    cuts = [float(lo)]
    for s in np.sort(np.asarray(lines, float)):
        if s - cuts[-1] >= min_width_mm and hi - s >= min_width_mm:
            cuts.append(float(s))
    cuts.append(float(hi))
    return list(zip(cuts[:-1], cuts[1:], strict=True))
