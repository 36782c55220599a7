"""Rays from the waste side: which target faces a wire coming from the waste meets first.

A ray parallel to the waste direction ``w`` (``mold.up`` for a mold kept below, ``-mold.up``
for a counter-mold) is a point in plan view, so casting it is exact and cheap: a point-in-triangle
test in the part plan (:func:`wirecut.geometry.frames.to_plan` with ``mold.up``) with heights
``p . w``. Triangles are bucketed once on a uniform plan grid
(:class:`wirecut.geometry.plan_grid.PlanGrid`); triangles seen edge-on (plan area below 1e-12
of the extent squared) are vertical and never hit.

Used by the analysis (undercut: the ray from a vertex meets the target again) and by the check
map (what the wire sees first at every pixel).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.geometry.frames import to_plan
from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.plan_grid import PlanGrid

__all__ = ["occluded_vertices", "first_hit_faces", "FORK_FACES"]

#: From this many target faces a ray cast repays running in a forked worker process
#: (:func:`wirecut.workers.background`) beside other work.
FORK_FACES = 50_000


@dataclass(frozen=True, eq=False)
class _PlanIndex:
    """Target triangles bucketed on a plan grid (plan = the plane perpendicular to ``w``)."""

    plan: np.ndarray  # (n, 2) mm, plan coordinates of the vertices
    height: np.ndarray  # (n,) mm, p . w
    faces: np.ndarray  # (m, 3)
    det: np.ndarray  # (m,) mm^2, twice the signed plan area of each face
    grid: PlanGrid  # the faces that are not edge-on, by their plan boxes

    @classmethod
    def build(cls, target: TargetSurface) -> _PlanIndex | None:
        w = target.waste_normal
        v, f = target.vertices, target.faces
        plan = to_plan(v, target.up)  # the part plan view; heights along the waste direction
        tri = plan[f]
        a, b, c = tri[:, 0], tri[:, 1], tri[:, 2]
        det = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (c[:, 0] - a[:, 0]) * (b[:, 1] - a[:, 1])
        scale = float(np.ptp(plan, axis=0).max()) if len(plan) else 1.0
        tid = np.flatnonzero(np.abs(det) > 1e-12 * scale**2)
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
    do not count.
    """
    out = np.zeros(len(target.vertices), bool)
    index = _PlanIndex.build(target)
    if index is None:
        return out
    eps = 1e-6 * max(target.extent_mm, 1e-9)
    for qi, _, h in index.hits(index.plan, vertex=np.arange(len(index.plan))):
        hit = h > index.height[qi] + eps
        out[np.unique(qi[hit])] = True
    return out


def first_hit_faces(target: TargetSurface, plan_xy: np.ndarray) -> np.ndarray:
    """(k,) int: the face a ray from the waste side meets first above each plan point; -1 if none.

    Parameters
    ----------
    target : TargetSurface
    plan_xy : (k, 2) float, mm, part plan view (:func:`wirecut.geometry.frames.to_plan` with
        ``mold.up``)
    """
    pts = np.asarray(plan_xy, float).reshape(-1, 2)
    best = np.full(len(pts), -1, np.int64)
    index = _PlanIndex.build(target)
    if index is None:
        return best
    top = np.full(len(pts), -np.inf)
    for qi, t, h in index.hits(pts):
        order = np.lexsort((h, qi))  # per query, the highest last
        qs, ts, hs = qi[order], t[order], h[order]
        last = np.r_[qs[1:] != qs[:-1], True]
        q_last, t_last, h_last = qs[last], ts[last], hs[last]
        better = h_last > top[q_last]
        best[q_last[better]] = t_last[better]
        top[q_last[better]] = h_last[better]
    return best
