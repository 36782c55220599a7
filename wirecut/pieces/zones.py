"""Zones of a creased surface: the sides between its creases, each cut with its own wire.

A hipped roof's four faces each want the wire along their own eave: there every ruling is
horizontal and the cut is exact. Across a face the ruling climbs with the roof's slope, and
extended to the towers a 30 degree slope over a 1600 mm span asks 920 mm of vertical travel:
one wire direction for the whole roof cuts two faces well and cannot drive the other two (a
3 m x 2 m roof gave 54 pieces, none of them drivable). Planned one side at a time, each with
its own direction search and split, the same roof takes 10 pieces, every one exact.

The zones are the connected sides between the target's bent edges (:func:`_bent_sides`: the
crease angle without the break lines' contrast test, so that a crease zigzagging across the
triangles still divides them). A side of less than ``MIN_ZONE_SHARE`` of
the plan area (a narrow chamfer, a step's wall, a sliver between two creases) joins the
neighbour it shares the most bent-edge length with (a detached one, the largest zone), so that
every face belongs to a zone and
no zone is too small to be worth a direction of its own. Each zone becomes a target of its
own (:func:`zone_target`): the same vertices, in the same part frame, with that zone's faces.
Pieces of neighbouring zones meet along the crease between them, in plan; each is cut from
its own blank and trimmed to its outline (the DXF).

:func:`wirecut.plan.make_plan` plans the zones only when the plan with one direction leaves
pieces without a program or out of tolerance, and keeps the zoned plan only when it does
better (docs/methods-pieces.md).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from wirecut.config import JobProfile

__all__ = ["MAX_SIDES", "MIN_ZONE_SHARE", "crease_zones", "zone_target"]

#: More sides than this between the creases is a noisy or finely faceted mesh, not a part of
#: a few faces that want directions of their own: no zones (and no quadratic merging).
MAX_SIDES = 100
#: A side with less of the plan area than this share joins a neighbour (a coffer's chamfers,
#: 60 mm wide on a 2 m x 1.5 m plate, have 1.5 % and 2.5 % each, and need directions of
#: their own).
MIN_ZONE_SHARE = 0.01


def crease_zones(target: Any) -> list[np.ndarray]:
    """Face indices of each zone of ``target`` (see the module docstring), largest plan area
    first; empty when the creases leave fewer than two zones, or more than ``MAX_SIDES``
    sides."""
    from wirecut.geometry.creases import sharp_edges

    sides = _bent_sides(target)
    if sides is None or not 2 <= sides[0] <= MAX_SIDES:
        return []
    count, side, bent = sides
    side = side.copy()
    up = np.asarray(target.up, float)
    plan = np.asarray(target.face_areas, float) * np.abs(np.asarray(target.face_normals) @ up)
    first, second, _ = sharp_edges(target)
    fa, fb = (first // 3)[bent], (second // 3)[bent]
    v = np.asarray(target.vertices, float)
    ends = target.edge_table.edges[target.edge_table.counts == 2][bent]
    length = np.linalg.norm(v[ends[:, 1]] - v[ends[:, 0]], axis=1)
    total = float(plan.sum())
    while True:
        area = np.bincount(side, weights=plan, minlength=count)
        alive = np.flatnonzero(np.bincount(side, minlength=count) > 0)
        small = [k for k in alive if area[k] < MIN_ZONE_SHARE * total]
        if not small or len(alive) < 2:
            break
        k = min(small, key=lambda j: (area[j], j))  # the smallest joins first
        sa, sb = side[fa], side[fb]
        shared = np.bincount(
            np.r_[sb[sa == k], sa[sb == k]],
            weights=np.r_[length[sa == k], length[sb == k]],
            minlength=count,
        )
        shared[k] = 0.0
        if not shared.any():  # no crease to a neighbour (a detached sheet): the largest
            shared = area.copy()
            shared[k] = -1.0
        side[side == k] = int(np.argmax(shared))
    area = np.bincount(side, weights=plan, minlength=count)
    keep = [k for k in np.argsort(-area, kind="stable") if area[k] >= MIN_ZONE_SHARE * total]
    if len(keep) < 2:
        return []
    return [np.flatnonzero(side == k) for k in keep]


def _bent_sides(target: Any) -> tuple[int, np.ndarray, np.ndarray] | None:
    """(count, side (m,) int, bent (k,) bool) of the target's faces grouped into the connected
    sides between its bent edges (normals apart by at least
    :data:`wirecut.geometry.creases.CREASE_DEG`, without the crease test's contrast: a crease
    that zigzags across the triangles bends each edge it crosses that much, and the sliver of
    triangles along it becomes small sides that join a neighbour); None when no edge bends,
    or more than ``CREASE_SHARE`` of them do (a coarse tessellation of a smooth surface)."""
    from wirecut.geometry.creases import CREASE_DEG, CREASE_SHARE, face_sides, sharp_edges

    first, second, _ = sharp_edges(target)
    if len(first) == 0:
        return None
    normals = np.asarray(target.face_normals, float)
    cos = np.einsum("ij,ij->i", normals[first // 3], normals[second // 3])
    bent = cos <= np.cos(np.radians(CREASE_DEG))
    if not bent.any() or bent.mean() > CREASE_SHARE:
        return None
    count, side = face_sides(target, bent)
    return count, side, bent


def zone_target(target: Any, faces: np.ndarray, job: JobProfile):
    """The zone's own target: ``target``'s vertices (part frame, mm) with the faces
    ``faces``, through the same intake (its findings are the whole target's, dropped)."""
    from wirecut.geometry.mesh import target_from_arrays

    zone, _ = target_from_arrays(
        np.asarray(target.vertices, float), np.asarray(target.faces)[faces], job
    )
    return zone
