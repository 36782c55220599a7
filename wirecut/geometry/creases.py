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
searched between those cuts. Only creases along the sweep are break lines: one that runs along
the wire is a ruling (the wire lies in it: its knot comes from :func:`break_lines` given the
sweep, or, for one not parallel to the wire, its skewed line from :func:`crease_lines`), and
one that runs across both cannot be kept out of a strip by any cut across the wire.

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
    "crease_sides",
    "face_sides",
    "CREASE_SHARE",
    "break_lines",
    "crease_lines",
    "PARALLEL_SKEW_MM",
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
#: of the four; with fewer than three left the edge is no crease. Where creases meet, a bent
#: edge whose two ends both lie on crease edges is one too. (A crease that zigzags
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
    # where creases meet (a recess's corner, two chamfers and its floor) the edges around
    # an edge are creases too, and the contrast fails: a bent edge both of whose ends lie on
    # crease edges joins them (once; a smooth tessellation has no crease edges to join)
    if sharp.any():
        ends = table.edges[table.counts == 2]
        on = np.zeros(len(target.vertices), bool)
        on[ends[sharp].ravel()] = True
        sharp |= bent & on[ends[:, 0]] & on[ends[:, 1]]
    return first, second, sharp


sharp_edges = PerTarget(_sharp_edges)


#: A mesh whose share of crease edges is above this is taken for a coarse tessellation of a
#: smooth surface (or a noisy one), not a surface with creases: it has no sides.
CREASE_SHARE = 0.2


def face_sides(target: Any, cut: np.ndarray) -> tuple[int, np.ndarray]:
    """(count, side (m,) int) of the target's faces grouped into the connected sides that the
    inner edges ``cut`` (k,) bool, in :func:`sharp_edges` order, separate (scipy's connected
    components over the face adjacency without those edges)."""
    from scipy import sparse
    from scipy.sparse.csgraph import connected_components

    first, second, _ = sharp_edges(target)
    fa, fb = first // 3, second // 3
    m = len(target.faces)
    keep = ~np.asarray(cut, bool)
    graph = sparse.coo_matrix((np.ones(int(keep.sum())), (fa[keep], fb[keep])), shape=(m, m))
    count, side = connected_components(graph, directed=False)
    return int(count), side


def _crease_sides(target: Any) -> tuple[int, np.ndarray] | None:
    """(count, side (m,) int) of the target's faces grouped into the connected sides between
    its creases (:func:`face_sides`); None when it has no crease, or more than
    :data:`CREASE_SHARE` of its inner edges are creases."""
    first, _, sharp = sharp_edges(target)
    if len(first) == 0 or not sharp.any() or sharp.mean() > CREASE_SHARE:
        return None
    return face_sides(target, sharp)


crease_sides = PerTarget(_crease_sides)


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


#: Crease edges whose lines cross both faces of a strip within this share of its width of
#: each other belong to one crease line (a curved ridge's tangents spread by about four times
#: its sagitta over the strip).
_LINE_GATHER_SHARE = 0.05
#: Least length along the wire of a crease line, as a share of the strip's width.
_LINE_LEAST_SHARE = 0.25
#: A crease line whose skew across its strip is at most this (mm) runs parallel to the wire:
#: its knot is one of the ridges (:func:`break_lines` along the sweep), its skew left to the
#: fit; the others are followed with their skew fixed.
PARALLEL_SKEW_MM = 1e-3


def crease_lines(
    target: Any,
    transform: np.ndarray,
    z_left: float,
    z_right: float,
    region: Any = None,
    max_slope: float = 1.0,
) -> tuple[np.ndarray, np.ndarray]:
    """The creases that run along the wire of one strip, as straight lines in its machine frame.

    A crease within 45 degrees of the wire (``max_slope`` = |dx/dz|) but not along it (a
    hipped roof's hip, a fold not parallel to the others, a ridge that curves in plan) is no
    break line (it crosses no cut across the wire) and not a vertical ruling either: the
    ruling that follows it is skewed, from where it crosses the left face to where it crosses
    the right. The crease edges of the target that cross the strip (the part of each between
    the faces, and, when ``region`` (a plan polygon) is given, the middle of that part inside
    it; each counts with the length of that part along the wire)
    are gathered into lines by where they cross the two faces (within
    ``_LINE_GATHER_SHARE`` of the width); a line shorter along the wire than
    ``_LINE_LEAST_SHARE`` of the width is left out; each kept line is the length-weighted
    least-squares line through its edges' ends.

    Parameters
    ----------
    target : TargetSurface
    transform : (4, 4) float
        The strip's placement, part -> machine.
    z_left, z_right : float, mm
        The strip's faces, machine z.
    region : shapely geometry, optional
        Plan region the edges must lie in.

    Returns
    -------
    x_mid : (j,) float, mm
        Machine x where each line crosses the mid-plane ``(z_left + z_right) / 2``, ascending.
    skew : (j,) float, mm
        Its x at the right face less its x at the left face (a ruling's skew).
    """
    empty = (np.zeros(0), np.zeros(0))
    ends = crease_ends(target)
    width = float(z_right - z_left)
    if len(ends) == 0 or not width > 0:
        return empty
    v = np.asarray(target.vertices, float)
    m = np.asarray(transform, float)
    p = v[ends[:, 0]] @ m[:3, :3].T + m[:3, 3]
    q = v[ends[:, 1]] @ m[:3, :3].T + m[:3, 3]
    dz, dx = q[:, 2] - p[:, 2], q[:, 0] - p[:, 0]
    # the part of each edge between the faces (a long edge of a CAD facet may cross the strip)
    z_lo = np.maximum(np.minimum(p[:, 2], q[:, 2]), z_left)
    z_hi = np.minimum(np.maximum(p[:, 2], q[:, 2]), z_right)
    keep = (np.abs(dz) > 1e-9) & (np.abs(dx) <= max_slope * np.abs(dz)) & (z_hi > z_lo)
    if not keep.any():
        return empty
    # the middle of that part, as a share of the edge from p
    u = np.where(keep, (0.5 * (z_lo + z_hi) - p[:, 2]) / np.where(keep, dz, 1.0), 0.5)
    if region is not None:
        import shapely

        up = np.asarray(target.up, float)
        a3, b3 = v[ends[keep, 0]], v[ends[keep, 1]]
        mid = to_plan(a3 + u[keep, None] * (b3 - a3), up)
        keep[np.flatnonzero(keep)] = shapely.contains_xy(region, mid[:, 0], mid[:, 1])
    if not keep.any():
        return empty
    slope = dx[keep] / dz[keep]
    p_x, p_z, q_x, q_z = p[keep, 0], p[keep, 2], q[keep, 0], q[keep, 2]
    zc = 0.5 * (z_lo[keep] + z_hi[keep])
    cx = p_x + u[keep] * dx[keep]
    length = z_hi[keep] - z_lo[keep]
    xl = cx + slope * (z_left - zc)
    xr = cx + slope * (z_right - zc)
    gather = _LINE_GATHER_SHARE * width
    centre = 0.5 * (xl + xr)
    order = np.argsort(centre, kind="stable")
    ahead = np.searchsorted(centre[order], centre[order] + gather, side="right")
    used = np.zeros(len(order), bool)
    z_mid = 0.5 * (z_left + z_right)
    out_x, out_s = [], []
    for n, i in enumerate(order):
        if used[n]:
            continue
        # every edge before n is in a line already; one within the gather of edge i at both
        # faces lies within it at the mid-plane too, so the window ahead holds them all
        window = slice(n, int(ahead[n]))
        rest = order[window]
        near = (~used[window]) & (np.abs(xl[rest] - xl[i]) <= gather)
        near &= np.abs(xr[rest] - xr[i]) <= gather
        members = rest[near]
        used[window][near] = True
        w = length[members]
        if w.sum() < _LINE_LEAST_SHARE * width:
            continue
        # x = a + b (z - z_mid), weighted least squares through the edges' ends (so that
        # one long edge, a CAD facet's, is a line too), each end weighted by half its edge
        ends_z = np.concatenate([p_z[members], q_z[members]]) - z_mid
        ends_x = np.concatenate([p_x[members], q_x[members]])
        b, a = np.polyfit(ends_z, ends_x, 1, w=np.sqrt(np.concatenate([w, w]) / 2.0))
        if abs(b) > max_slope:
            continue
        out_x.append(float(a))
        out_s.append(float(b * width))
    if not out_x:
        return empty
    order = np.argsort(out_x)
    return np.asarray(out_x)[order], np.asarray(out_s)[order]


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
