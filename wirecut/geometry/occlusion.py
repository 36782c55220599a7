"""Rays from the waste side: which target faces a wire coming from the waste meets first.

A ray parallel to the waste direction ``w`` (``mold.up`` for a mold kept below, ``-mold.up``
for a counter-mold) is a point in plan view, so casting it is exact and cheap: a point-in-triangle
test in the part plan (:func:`wirecut.geometry.frames.to_plan` with ``mold.up``) with heights
``p . w``. Triangles are bucketed once on a uniform plan grid
(:class:`wirecut.geometry.plan_grid.PlanGrid`); triangles seen edge-on (plan area below 1e-12
of the extent squared) are vertical and never hit.

Used by the analysis (undercut: the ray from a vertex meets the target again), by the sampling
of pieces (a sample under another part of the surface is undercut: :func:`occluded_points`) and
by the check map (what the wire sees first at every pixel).

Most molds are height fields over the plan: no two points of the surface share a plan position,
and then no vertex's ray can meet the target again. :func:`plan_view_injective` proves that
without casting a ray. The plan projection is linear on each face; when every face looks toward
the waste side (positive plan area, none edge-on), the number of faces over a plan point off the
boundary's image equals the winding number of the projected boundary about it (the faces'
winding numbers add up and the interior edges cancel: the degree of the projection, as in the
argument principle). So the projection is one-to-one exactly when that winding number is 0 or 1
everywhere, and with boundary loops that neither cross nor touch (each one simple, no two
meeting) that is read off the loops' nesting: the winding just inside and just outside each loop.
A surface that fails any part of the test (a face looking away or edge-on, a pinched or
non-manifold boundary, crossing loops, a soup with too many boundary edges to trace) has its
rays cast as before.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from wirecut.geometry.frames import to_plan
from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.per_target import PerTarget
from wirecut.geometry.plan_grid import PlanGrid

__all__ = [
    "occluded_vertices",
    "occluded_points",
    "prepare_occlusion",
    "is_height_field",
    "vertex_rays",
    "first_hit_faces",
    "plan_view_injective",
    "plan_and_det",
    "FORK_FACES",
]

#: From this many target faces a ray cast repays running in a forked worker process
#: (:func:`wirecut.workers.background`) beside other work.
FORK_FACES = 50_000
#: Most boundary edges :func:`plan_view_injective` traces into loops; beyond it (a triangle
#: soup is all boundary) the rays are cast instead.
_CERTIFY_EDGES = 200_000
#: Most boundary loops it compares pairwise for their nesting.
_CERTIFY_LOOPS = 64


def plan_and_det(target: TargetSurface) -> tuple[np.ndarray, np.ndarray, float]:
    """Plan coordinates (n, 2) of the vertices, twice the signed plan area of each face (m,),
    and the edge-on threshold of that area (mm^2)."""
    plan = to_plan(target.vertices, target.up)  # the part plan view
    f = target.faces
    a, b, c = plan[f[:, 0]], plan[f[:, 1]], plan[f[:, 2]]
    det = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (c[:, 0] - a[:, 0]) * (b[:, 1] - a[:, 1])
    scale = float(np.ptp(plan, axis=0).max()) if len(plan) else 1.0
    return plan, det, 1e-12 * scale**2


def plan_view_injective(target: TargetSurface, plan_det=None) -> bool:
    """True when no two points of the target share a plan position (proven; see the module
    docstring): every face looks toward the waste side and is not edge-on, the boundary is
    closed manifold loops, the projected loops neither cross nor touch, and the winding number
    just inside and just outside every loop is 0 or 1. False means *not proven*: the rays must
    be cast. ``plan_det`` is :func:`plan_and_det` of the target when already computed."""
    import shapely

    plan, det, thr = plan_det if plan_det is not None else plan_and_det(target)
    sign = 1.0 if float(target.waste_normal @ target.up) > 0 else -1.0
    if len(det) == 0 or not (sign * det > thr).all():
        return False
    table = target.edge_table
    if (table.counts > 2).any():
        return False
    lone = table.lone()
    if len(lone) == 0 or len(lone) > _CERTIFY_EDGES:
        return False
    face, k = np.divmod(lone, 3)
    tail = target.faces[face, k]
    head = target.faces[face, (k + 1) % 3]
    n = len(plan)
    if np.bincount(tail, minlength=n).max() > 1 or np.bincount(head, minlength=n).max() > 1:
        return False  # a pinched boundary: two loops through one vertex
    nxt = np.full(n, -1, np.int64)
    nxt[tail] = head
    if (nxt[head] < 0).any():
        return False  # a boundary path that does not close
    todo = np.zeros(n, bool)
    todo[tail] = True
    nxt_list = nxt.tolist()
    loops: list[np.ndarray] = []
    for start in tail.tolist():
        if not todo[start]:
            continue
        loop = [start]
        todo[start] = False
        at = nxt_list[start]
        while at != start:
            loop.append(at)
            todo[at] = False
            at = nxt_list[at]
        if len(loops) == _CERTIFY_LOOPS:
            return False
        loops.append(np.asarray(loop))
    rings = [plan[np.append(loop, loop[0])] for loop in loops]
    if not shapely.MultiLineString(rings).is_simple:
        return False  # loops that cross or touch, or a loop that crosses itself
    # orientation of each loop as the faces wind it: +1 an outer boundary, -1 a hole
    area = [0.5 * float(np.sum(r[:-1, 0] * r[1:, 1] - r[1:, 0] * r[:-1, 1])) * sign for r in rings]
    turn = [1 if x > 0 else -1 for x in area]
    polygons = [shapely.Polygon(r) for r in rings]
    for i, r in enumerate(rings):
        outside = sum(
            turn[j]
            for j in range(len(rings))
            if j != i and shapely.contains_xy(polygons[j], r[0, 0], r[0, 1])
        )
        if outside not in (0, 1) or outside + turn[i] not in (0, 1):
            return False
    return True


@dataclass(frozen=True, eq=False)
class _PlanIndex:
    """Target triangles bucketed on a plan grid (plan = the plane perpendicular to ``w``)."""

    plan: np.ndarray  # (n, 2) mm, plan coordinates of the vertices
    height: np.ndarray  # (n,) mm, p . w
    faces: np.ndarray  # (m, 3)
    det: np.ndarray  # (m,) mm^2, twice the signed plan area of each face
    grid: PlanGrid  # the faces that are not edge-on, by their plan boxes

    @classmethod
    def build(cls, target: TargetSurface, plan_det=None) -> _PlanIndex | None:
        w = target.waste_normal
        v, f = target.vertices, target.faces
        # the part plan view; heights along the waste direction
        plan, det, thr = plan_det if plan_det is not None else plan_and_det(target)
        a, b, c = plan[f[:, 0]], plan[f[:, 1]], plan[f[:, 2]]
        tid = np.flatnonzero(np.abs(det) > thr)
        if tid.size == 0:
            return None
        a, b, c = a[tid], b[tid], c[tid]
        lo_box = np.minimum(np.minimum(a, b), c)
        hi_box = np.maximum(np.maximum(a, b), c)
        grid = PlanGrid.of_boxes(lo_box, hi_box, tid, plan.min(axis=0), np.ptp(plan, axis=0))
        return cls(plan, v @ w, f, det, grid)

    def hits(self, points: np.ndarray, chunk: int = 200_000, vertex: np.ndarray | None = None):
        """Yield (query index (k,), face (k,), height (k,) mm) for every face holding a point.

        ``vertex`` (k,) int, if given, names a mesh vertex per point whose own faces are left
        out before the exact test (a vertex's ray starts on them)."""
        points = np.asarray(points, float)
        f, plan = self.faces, self.plan
        for qi, t in self.grid.candidates(points, chunk):
            if vertex is not None:
                other = (f[t] != vertex[qi][:, None]).all(axis=1)
                qi, t = qi[other], t[other]
            p = points[qi]
            ta, tb, tc = plan[f[t, 0]], plan[f[t, 1]], plan[f[t, 2]]
            d = self.det[t]
            l1 = (
                (tb[:, 0] - p[:, 0]) * (tc[:, 1] - p[:, 1])
                - (tc[:, 0] - p[:, 0]) * (tb[:, 1] - p[:, 1])
            ) / d
            l2 = (
                (tc[:, 0] - p[:, 0]) * (ta[:, 1] - p[:, 1])
                - (ta[:, 0] - p[:, 0]) * (tc[:, 1] - p[:, 1])
            ) / d
            l3 = 1.0 - l1 - l2
            inside = (l1 >= -1e-9) & (l2 >= -1e-9) & (l3 >= -1e-9)
            h = l1 * self.height[f[t, 0]] + l2 * self.height[f[t, 1]] + l3 * self.height[f[t, 2]]
            yield qi[inside], t[inside], h[inside]


def occluded_vertices(target: TargetSurface) -> np.ndarray:
    """(n,) bool: the ray from the vertex toward the waste side meets the target again.

    The ray is parallel to the waste direction ``w``, so it is the plan-view point-in-triangle
    test with heights ``p . w``; triangles are bucketed on a plan grid. The vertex's own faces
    do not count. A target whose plan view is proven one-to-one (:func:`plan_view_injective`)
    has no occluded vertex and casts no ray.
    """
    plan_det = plan_and_det(target)
    if is_height_field(target, plan_det):
        return np.zeros(len(target.vertices), bool)
    return vertex_rays(target, plan_det)


#: The target's :class:`_PlanIndex` (or None), built once per target: ``_plan_index(target,
#: plan_det=None)``.
_plan_index = PerTarget(_PlanIndex.build)


def _height_field(target: TargetSurface, plan_det=None) -> bool:
    return bool(plan_view_injective(target, plan_det))


#: :func:`plan_view_injective` of the target, worked out once per target:
#: ``is_height_field(target, plan_det=None)``.
is_height_field = PerTarget(_height_field)


def prepare_occlusion(target: TargetSurface) -> None:
    """Work out once whether the target is a height field and, where it is not, build the
    plan index :func:`occluded_points` needs (before worker processes are forked)."""
    if not is_height_field(target):
        _plan_index(target)


def occluded_points(
    target: TargetSurface,
    points: np.ndarray,
    face: np.ndarray,
    counts: Callable[[np.ndarray], np.ndarray] | None = None,
) -> np.ndarray:
    """(k,) bool: points (k, 3) mm on the target's faces ``face`` (k,), part frame, over which
    another face lies toward the waste side (the wire coming from the waste meets that face
    first: the point is undercut).

    A face other than the point's own counts when the point lies inside its plan view and it
    is more than 1e-6 of the extent higher there (a neighbour sharing the point's edge is not).
    ``counts``, if given, takes face indices (j,) and says (j,) bool which of them may count
    at all (a piece's samples on its outline are hidden only by faces inside the piece).
    A target proven to be a height field (:func:`is_height_field`) has none and casts nothing;
    otherwise the plan index (the one the vertex rays and the check map use too) is built once
    per target (before worker processes are forked,
    :func:`wirecut.ruled.sampling.prepare_sampling`, so that they inherit it).
    """
    pts = np.asarray(points, float).reshape(-1, 3)
    out = np.zeros(len(pts), bool)
    if len(pts) == 0 or is_height_field(target):
        return out
    index = _plan_index(target)
    if index is None:
        return out
    own = np.asarray(face, np.int64).reshape(-1)
    height = pts @ target.waste_normal
    eps = 1e-6 * max(target.extent_mm, 1e-9)
    for qi, t, h in index.hits(to_plan(pts, target.up)):
        over = (t != own[qi]) & (h > height[qi] + eps)
        if counts is not None and over.any():
            over[over] = counts(t[over])
        out[qi[over]] = True
    return out


def vertex_rays(target: TargetSurface, plan_det=None) -> np.ndarray:
    """(n,) bool: :func:`occluded_vertices` by casting every vertex's ray."""
    out = np.zeros(len(target.vertices), bool)
    index = _plan_index(target, plan_det)
    if index is None:
        return out
    eps = 1e-6 * max(target.extent_mm, 1e-9)
    for qi, _, h in index.hits(index.plan, vertex=np.arange(len(index.plan))):
        hit = h > index.height[qi] + eps
        out[np.unique(qi[hit])] = True
    return out


def first_hit_faces(
    target: TargetSurface, plan_xy: np.ndarray, marked: np.ndarray | None = None
) -> np.ndarray | tuple[np.ndarray, np.ndarray]:
    """(k,) int: the face a ray from the waste side meets first above each plan point; -1 if none.

    Parameters
    ----------
    target : TargetSurface
    plan_xy : (k, 2) float, mm, part plan view (:func:`wirecut.geometry.frames.to_plan` with
        ``mold.up``)
    marked : (m,) bool, optional
        Faces of interest (the undercut ones, for the check map): when given, also returned
        is (k,) bool, whether any marked face lies over the point at any height (hidden under
        the first face or not).
    """
    pts = np.asarray(plan_xy, float).reshape(-1, 2)
    best = np.full(len(pts), -1, np.int64)
    covered = np.zeros(len(pts), bool)
    index = _plan_index(target)
    if index is None:
        return best if marked is None else (best, covered)
    top = np.full(len(pts), -np.inf)
    for qi, t, h in index.hits(pts):
        if marked is not None:
            covered[qi[marked[t]]] = True
        order = np.lexsort((h, qi))  # per query, the highest last
        qs, ts, hs = qi[order], t[order], h[order]
        last = np.r_[qs[1:] != qs[:-1], True]
        q_last, t_last, h_last = qs[last], ts[last], hs[last]
        better = h_last > top[q_last]
        best[q_last[better]] = t_last[better]
        top[q_last[better]] = h_last[better]
    return best if marked is None else (best, covered)
