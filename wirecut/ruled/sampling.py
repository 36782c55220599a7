"""Area-weighted samples of a target surface, in a piece's machine frame.

Every triangle of the target is covered by a barycentric lattice of ``n`` divisions per side,
``n = ceil(longest edge / h)``, so neighbouring lattice points are at most ``h`` apart. The
lattice points are ``A + (i/n)(B - A) + (j/n)(C - A)``, ``i + j <= n``: they include the
triangle's corners and edges, so the mesh boundary itself is sampled. Each of the ``n^2``
sub-triangles hands a third of its area ``area / n^2`` to each of its corners (the
piecewise-linear, trapezoid-type quadrature), so the weights of a face sum to its area exactly.
Points on an edge shared by two faces appear once per face, each copy with its share of weight.

Sampling rule (why the reported maximum is within 1 % of the true one)
----------------------------------------------------------------------
Inside a triangle the target is planar and the cut is a bilinear patch, so the deviation d is
smooth there and a lattice of spacing ``h`` misses an interior maximum by at most
``|d''| h^2 / 8`` (the error of the nearest lattice point to a smooth extremum, the same bound
as the sagitta of a chord of length h). With ``|d''| <= kappa`` (the larger principal curvature
of target and cut), choosing ``h <= sqrt(8 * 0.01 * tol / kappa)`` keeps that miss below 1 % of
the tolerance. Maxima on the region boundary are caught by samples on the boundary itself: the
mesh boundary is in the lattice, and a clipping polygon's boundary is sampled at spacing ``h``
with zero-weight samples (they count for the maximum, not for areas). Maxima on a ruling, where
the cut has a slope jump ``kappa_s H`` (sweep curvature times ruling spacing), are missed by at
most ``kappa_s H h / 4``; :func:`spacing_for` also caps ``h <= H / 3`` so that with the fit's
ruling spacing (chord error 10 % of the tolerance) this stays a few percent of the tolerance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import shapely

from wirecut.errors import MeshError
from wirecut.geometry.frames import apply, to_plan
from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.occlusion import occluded_points, prepare_occlusion
from wirecut.geometry.per_target import PerTarget
from wirecut.geometry.plan_grid import PlanGrid
from wirecut.geometry.plan_shapes import triangle_polygons
from wirecut.geometry.vectors import cross

__all__ = [
    "TargetSamples",
    "sample_target",
    "prepare_sampling",
    "prepared_faces",
    "judging_samples",
    "JUDGING_DENSITY",
    "DETAIL_SAG_MM",
    "judging_spacing",
    "default_spacing",
    "spacing_for",
    "MAX_DIVISIONS",
]

#: Largest lattice division of one face; a face needing more is a sign of a wrong spacing.
MAX_DIVISIONS = 256

#: A piece's final fit and the judging of its program use samples this many times denser (per
#: area) than the default rule: a min-max fit equalizes its error at the points it sees, and
#: between them, mostly at the piece's edges, the error runs higher (measured on the demo's dome
#: at the default density: up to 17 % against a brute force 4x denser).
JUDGING_DENSITY = 4.0

#: The chord sag (mm) below which a fine mesh's surface counts as straight between samples
#: (1 % of a 0.5 mm tolerance): sets :meth:`_Prepared.detail_spacing`.
DETAIL_SAG_MM = 0.005


@dataclass(frozen=True)
class TargetSamples:
    """Samples of the target surface for one piece setup.

    Attributes
    ----------
    points : (n, 3) float, mm, machine frame
        Sample positions on the target.
    normals : (n, 3) float, unit, machine frame
        Normal of the face the sample lies on, toward the waste side.
    weights : (n,) float, mm^2
        Target area the sample stands for; zero for boundary samples that only count toward
        the maximum deviation.
    undercut : (n,) bool
        True where the face normal does not point up in the machine frame (``n . +y <= 0``):
        a wire coming from the waste side cannot reach it.
    plan_xy : (n, 2) float, mm, part plan view
        Plan coordinates of the samples (:func:`wirecut.geometry.frames.to_plan`).
    face : (n,) int
        Index of the target face each sample comes from.
    spacing_mm : float
        The lattice spacing h used, mm.
    """

    points: np.ndarray
    normals: np.ndarray
    weights: np.ndarray
    undercut: np.ndarray
    plan_xy: np.ndarray
    face: np.ndarray
    spacing_mm: float

    def __len__(self) -> int:
        return len(self.weights)

    @property
    def area_mm2(self) -> float:
        """Total target area represented, mm^2."""
        return float(self.weights.sum())

    def subset(self, mask: np.ndarray) -> TargetSamples:
        """The samples selected by a boolean or integer index array."""
        return TargetSamples(
            self.points[mask],
            self.normals[mask],
            self.weights[mask],
            self.undercut[mask],
            self.plan_xy[mask],
            self.face[mask],
            self.spacing_mm,
        )

    def merged(self) -> TargetSamples:
        """The samples with the copies of a point merged into its first (weights summed, so
        areas are kept; normal and undercut flag of the first copy).

        The lattice of every face holds its corners and edges, so a point shared by k faces
        appears k times (six times at an inner vertex of a regular mesh, and most samples
        are such vertices where the mesh is finer than the spacing). Copies add nothing to a
        min-max fit but its size."""
        if len(self) < 2:
            return self
        from wirecut.geometry.mesh import unique_rows

        key = np.round(self.points / 1e-6).astype(np.int64)
        # the first copy of each point (lowest index) and each sample's point, by a stable
        # sort of the (x, y, z) keys; the weights add up in index order within a point
        first, group = unique_rows(key)
        if len(first) == len(self):
            return self
        weights = np.bincount(group, weights=self.weights, minlength=len(first))
        seen = np.argsort(first, kind="stable")  # points in first-seen order
        return replace(self.subset(first[seen]), weights=weights[seen])

    def thinned(self, cell_mm: float) -> TargetSamples:
        """At most one weighted sample per plan cell of side ``cell_mm`` (the first in order,
        carrying the whole cell's weight, so areas are kept), plus every zero-weight sample
        (the region's outline, kept for the maximum). For a mesh much finer than the spacing
        a coarse fit asks for, whose lattice is then just its vertices."""
        cell = float(cell_mm)
        weighted = np.flatnonzero(self.weights > 0)
        if len(weighted) < 2 or not cell > 0:
            return self
        ij = np.floor((self.plan_xy[weighted] - self.plan_xy[weighted].min(axis=0)) / cell)
        ij = ij.astype(np.int64)
        key = ij[:, 0] * (int(ij[:, 1].max()) + 1) + ij[:, 1]
        uniq, first, inverse = np.unique(key, return_index=True, return_inverse=True)
        keep = weighted[first]
        weights = self.weights.copy()
        weights[keep] = np.bincount(inverse.reshape(-1), weights=self.weights[weighted])
        mask = self.weights <= 0
        mask[keep] = True
        return replace(
            self.subset(mask), weights=weights[mask], spacing_mm=max(self.spacing_mm, cell)
        )

    def transformed(self, transform: np.ndarray) -> TargetSamples:
        """The same samples moved by a rigid 4x4 transform (points and normals)."""
        t = np.asarray(transform, float)
        return TargetSamples(
            apply(t, self.points),
            self.normals @ t[:3, :3].T,
            self.weights,
            self.undercut,
            self.plan_xy,
            self.face,
            self.spacing_mm,
        )


def spacing_for(
    tolerance_mm: float, curvature_per_mm: float, ruling_spacing_mm: float | None = None
) -> float:
    """Lattice spacing h (mm) that keeps the missed maximum within 1 % of the tolerance.

    ``h = sqrt(8 * 0.01 * tol / kappa)`` (interior extremum of a smooth deviation), capped at
    ``ruling_spacing_mm / 3`` when given, and kept within 0.5..50 mm.
    """
    tol = float(tolerance_mm)
    kappa = max(float(curvature_per_mm), 1e-9)
    h = math.sqrt(8.0 * 0.01 * tol / kappa)
    if ruling_spacing_mm is not None:
        h = min(h, float(ruling_spacing_mm) / 3.0)
    return float(np.clip(h, 0.5, 50.0))


def _lattice(n: int) -> tuple[np.ndarray, np.ndarray]:
    """Barycentric lattice of n divisions: coords (p, 2) as (i/n, j/n) and weights (p,)
    as shares of the face area (summing to 1)."""
    i, j = np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij")
    keep = (i + j) <= n
    i, j = i[keep], j[keep]
    k = n - i - j
    zeros = (i == 0).astype(int) + (j == 0).astype(int) + (k == 0).astype(int)
    # corners touch 1 sub-triangle, edge points 3, interior points 6
    touch = np.select([zeros >= 2, zeros == 1], [1, 3], 6)
    return np.column_stack([i, j]) / n, touch / (3.0 * n * n)


def _field(target: Any, name: str) -> np.ndarray:
    value = getattr(target, name, None)
    if value is None:
        raise MeshError(f"target has no field {name!r}")
    return np.asarray(value)


class _Prepared:
    """What sampling needs of a target, computed once per target: its triangles (part and
    plan), their areas and longest edges, the median edge and the plan bounding boxes."""

    def __init__(self, target: Any) -> None:
        vertices = _field(target, "vertices").astype(float)
        faces = _field(target, "faces").astype(np.int64)
        self.normals = _field(target, "face_normals").astype(float)
        self.up = _field(target, "up").astype(float)
        if len(faces) == 0:
            raise MeshError("target has no faces to sample")
        self.tri = vertices[faces]  # (m, 3, 3)
        edges = np.linalg.norm(self.tri[:, [1, 2, 0]] - self.tri, axis=2)  # (m, 3)
        self.longest = edges.max(axis=1)
        self.median_edge = float(np.median(edges))
        d1, d2 = self.tri[:, 1] - self.tri[:, 0], self.tri[:, 2] - self.tri[:, 0]
        self.area = 0.5 * np.linalg.norm(cross(d1, d2), axis=1)
        self.tri_plan = to_plan(self.tri.reshape(-1, 3), self.up).reshape(-1, 3, 2)
        a, b, c = self.tri_plan[:, 0], self.tri_plan[:, 1], self.tri_plan[:, 2]
        # corner by corner: a reduction over the middle axis of (m, 3, 2) is several times slower
        self.box_lo = np.minimum(np.minimum(a, b), c)
        self.box_hi = np.maximum(np.maximum(a, b), c)
        # the same bounds as contiguous columns, for the box tests of every sampled region
        self._box_columns = tuple(
            np.ascontiguousarray(box[:, j]) for box in (self.box_lo, self.box_hi) for j in (0, 1)
        )
        self.det = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (
            c[:, 0] - a[:, 0]
        )
        self._grid: PlanGrid | None = None
        self.vertices = vertices
        self.faces = faces
        self._edge_table = getattr(target, "edge_table", None)
        self._detail: float | None = None

    def detail_spacing(self) -> float:
        """The spacing (mm) at which the surface's chord sag reaches :data:`DETAIL_SAG_MM`:
        ``sqrt(8 sag / kappa)`` (sagitta of a chord), kappa the 99th percentile over the
        interior edges of the angle between the two faces' normals over the distance of their
        centroids (the discrete normal curvature across the edge; 1/R on a sphere of radius
        R). Infinite for a flat target. Computed on first use."""
        if self._detail is None:
            from wirecut.geometry.mesh import edge_table

            faces = self.faces
            table = self._edge_table
            if table is None:
                table = edge_table(faces, int(faces.max()) + 1)
            a, b = table.pairs()
            fa, fb = a // 3, b // 3
            cos = np.clip(np.einsum("ij,ij->i", self.normals[fa], self.normals[fb]), -1.0, 1.0)
            centre = self.tri.mean(axis=1)
            gap = np.linalg.norm(centre[fa] - centre[fb], axis=1)
            kappa = np.arccos(cos) / np.maximum(gap, 1e-12)
            k99 = float(np.percentile(kappa, 99)) if len(kappa) else 0.0
            self._detail = math.sqrt(8.0 * DETAIL_SAG_MM / k99) if k99 > 0 else math.inf
        return self._detail

    def plan_grid(self) -> PlanGrid | None:
        """Plan grid of the triangles that are not edge-on, by face index (built on first
        use; None when every triangle is edge-on)."""
        if self._grid is None:
            usable = np.flatnonzero(np.abs(self.det) > 1e-9)
            if len(usable) == 0:
                return None
            self._grid = PlanGrid.covering(self.box_lo[usable], self.box_hi[usable], usable)
        return self._grid

    def faces_near(self, region: shapely.Geometry) -> np.ndarray:
        """Ascending indices of the faces whose plan bounding box meets the region's."""
        x0, y0, x1, y1 = region.bounds
        pad = 1e-6 * (1.0 + max(abs(x0), abs(y0), abs(x1), abs(y1)))
        lo_x, lo_y, hi_x, hi_y = self._box_columns
        hit = (hi_x >= x0 - pad) & (lo_x <= x1 + pad)
        hit &= (hi_y >= y0 - pad) & (lo_y <= y1 + pad)
        return np.flatnonzero(hit)


#: The cached :class:`_Prepared` of a target.
_prepared = PerTarget(_Prepared)


def default_spacing(target: Any, density: float = 1.0) -> float:
    """The lattice spacing (mm) :func:`sample_target` uses without ``spacing_mm``."""
    if not density >= 1.0 or not math.isfinite(density):
        raise MeshError(f"sample density must be a number >= 1, got {density!r}")
    return float(np.clip(_prepared(target).median_edge, 1.0, 20.0)) / math.sqrt(density)


def prepared_faces(target: Any) -> _Prepared:
    """The target's triangles as sampling prepares them once (part and plan corners, plan
    boxes and their grid, ``faces_near``), for other plan-view work on the same target."""
    return _prepared(target)


def prepare_sampling(target: Any) -> None:
    """Compute once what sampling ``target`` needs (its triangles, plan grid, and where the
    target is not proven a height field the plan index of its undercut test), so that worker
    processes forked afterwards inherit it instead of each building its own."""
    _prepared(target).plan_grid()
    if isinstance(target, TargetSurface):
        prepare_occlusion(target)


def _first_seen(ids: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """``np.unique(ids, return_index=True, return_inverse=True)[1:]`` for indices ``ids``
    (k,) in ``0..n-1``, through a table of the n values instead of a sort: the first position
    of each distinct value (values ascending) and each position's rank among them."""
    at = np.full(n, len(ids), np.int64)
    np.minimum.at(at, ids, np.arange(len(ids)))
    values = np.flatnonzero(at < len(ids))
    rank = np.empty(n, np.int64)
    rank[values] = np.arange(len(values))
    return at[values], rank[ids]


def _reaches_into(region: shapely.Geometry, prep: _Prepared, faces: np.ndarray) -> np.ndarray:
    """(k,) bool: whether each face of ``faces`` (k,) covers some of the region's inside in
    plan, not only a point or an edge of its outline.

    A point on the outline belongs to the faces on both sides of it. Where the surface is
    continuous both give the same point, but at a step (a vertical wall, an edge of a sheet
    over another) the face beyond the outline lies at another height, and a piece ending at
    the step would be judged against the level of its neighbour."""
    out = np.zeros(len(faces), bool)
    if len(faces) == 0:
        return out
    uniq, inverse = np.unique(faces, return_inverse=True)
    centre = prep.tri_plan[uniq].mean(axis=1)
    owned = shapely.contains_xy(region, centre[:, 0], centre[:, 1])
    owned &= np.abs(prep.det[uniq]) > 1e-9
    rest = np.flatnonzero(~owned & (np.abs(prep.det[uniq]) > 1e-9))
    if len(rest):
        polys = triangle_polygons(prep.tri_plan[uniq[rest]])
        inside = shapely.area(shapely.intersection(polys, region))
        owned[rest] = inside > 1e-9 * 0.5 * np.abs(prep.det[uniq[rest]])
    return owned[inverse]


def _boundary_samples(
    region: shapely.Geometry, prep: _Prepared, spacing: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Zero-weight samples on the region's outline: (face index, barycentric (k, 2), plan xy)."""
    outline = shapely.segmentize(region.boundary, spacing)
    pts = shapely.get_coordinates(outline)
    if len(pts) == 0:
        return np.zeros(0, int), np.zeros((0, 2)), np.zeros((0, 2))
    grid = prep.plan_grid()
    if grid is None:
        return np.zeros(0, int), np.zeros((0, 2)), np.zeros((0, 2))
    # the grid's candidates, then shapely's exact test (a point on an edge or a corner
    # touches every triangle there, as a search tree's "intersects" query says)
    hits = []
    for ip, it in grid.candidates(pts):
        tri = prep.tri_plan[it]
        # a cell holds boxes that miss the point: drop those before making polygons
        near = (pts[ip] >= prep.box_lo[it]).all(axis=1) & (pts[ip] <= prep.box_hi[it]).all(axis=1)
        ip, it, tri = ip[near], it[near], tri[near]
        polys = triangle_polygons(tri)
        keep = shapely.intersects(shapely.points(pts[ip]), polys)
        hits.append((ip[keep], it[keep]))
    ip = np.concatenate([h[0] for h in hits]) if hits else np.zeros(0, np.int64)
    f = np.concatenate([h[1] for h in hits]) if hits else np.zeros(0, np.int64)
    owned = _reaches_into(region, prep, f)
    ip, f = ip[owned], f[owned]
    p = pts[ip]
    tri_plan = prep.tri_plan
    a, b, c = tri_plan[f, 0], tri_plan[f, 1], tri_plan[f, 2]
    d = prep.det[f]
    u = ((p[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (p[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])) / d
    v = ((b[:, 0] - a[:, 0]) * (p[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (p[:, 0] - a[:, 0])) / d
    bary = np.clip(np.column_stack([u, v]), 0.0, 1.0)
    return f, bary, p


def sample_target(
    target: Any,
    part_to_machine: np.ndarray,
    region: shapely.Geometry | None = None,
    spacing_mm: float | None = None,
    *,
    density: float = 1.0,
) -> TargetSamples:
    """Area-weighted samples of ``target`` in the machine frame of ``part_to_machine``.

    Parameters
    ----------
    target : TargetSurface
        Needs ``vertices (n, 3) mm part``, ``faces (m, 3) int``, ``face_normals (m, 3)`` unit
        toward the waste side and ``up (3,)``.
    part_to_machine : (4, 4) float
        Rigid transform part -> machine frame, row-major.
    region : shapely Polygon or (k, 2) float array, optional
        Outline in part plan coordinates (mm); only samples inside it (or on it) are kept.
    spacing_mm : float, optional
        Largest distance between neighbouring samples of a face, mm (see :func:`spacing_for`).
        Default: the median edge length of the target, within 1..20 mm.
    density : float
        Samples per area relative to the default spacing (the spacing is divided by its square
        root); ignored when ``spacing_mm`` is given.

    Returns
    -------
    TargetSamples
    """
    prep = _prepared(target)
    transform = np.asarray(part_to_machine, float)
    if transform.shape != (4, 4):
        raise MeshError(f"part_to_machine must be 4x4, got shape {transform.shape}")
    up, normals = prep.up, prep.normals
    if spacing_mm is None:
        spacing = default_spacing(target, density)
    else:
        spacing = float(spacing_mm)
        if not spacing > 0.0 or not math.isfinite(spacing):
            raise MeshError(f"sample spacing must be a positive number of mm, got {spacing_mm!r}")
    if region is not None and not isinstance(region, shapely.Geometry):
        outline = np.asarray(region, float)
        if outline.ndim != 2 or outline.shape[1] != 2 or len(outline) < 3:
            raise MeshError(f"region must be a polygon or (k >= 3, 2) outline, got {region!r}")
        region = shapely.Polygon(outline)
    # only the faces whose plan bounding box meets the region's are sampled (same samples
    # as sampling every face and clipping, at a cost that follows the region, not the mesh)
    near = np.arange(len(prep.tri)) if region is None else prep.faces_near(region)
    area = prep.area[near]
    divisions = np.clip(np.ceil(prep.longest[near] / spacing), 1, MAX_DIVISIONS).astype(int)

    pts_parts, w_parts, f_parts = [], [], []
    for n in np.unique(divisions):
        sel = np.flatnonzero(divisions == n)
        if n == 1:
            # a face finer than the spacing keeps its corners, which its neighbours share:
            # each vertex once (at its first corner, in the lattice's corner order a, c, b)
            # carrying a third of each face's area, as merged() would leave the copies
            ids = prep.faces[near[sel]][:, [0, 2, 1]].ravel()
            first, inverse = _first_seen(ids, len(prep.vertices))
            order = np.argsort(first, kind="stable")
            rank = np.empty_like(order)
            rank[order] = np.arange(len(order))
            corner = first[order]
            pts_parts.append(prep.vertices[ids[corner]])  # the corners' own vertices
            w_parts.append(
                np.bincount(rank[inverse.ravel()], weights=np.repeat(area[sel] / 3.0, 3))
            )
            f_parts.append(sel[corner // 3])
            continue
        bary, share = _lattice(int(n))
        tri = prep.tri[near[sel]]
        a = tri[:, 0][:, None, :]
        ab = (tri[:, 1] - tri[:, 0])[:, None, :]
        ac = (tri[:, 2] - tri[:, 0])[:, None, :]
        p = a + bary[None, :, 0:1] * ab + bary[None, :, 1:2] * ac  # (f, p, 3)
        pts_parts.append(p.reshape(-1, 3))
        w_parts.append((area[sel][:, None] * share[None, :]).reshape(-1))
        f_parts.append(np.repeat(sel, len(share)))
    if pts_parts:
        points = np.concatenate(pts_parts)
        weights = np.concatenate(w_parts)
        face = near[np.concatenate(f_parts)]  # indices into the whole target
    else:
        points, weights, face = np.zeros((0, 3)), np.zeros(0), np.zeros(0, np.int64)
    plan = to_plan(points, up)

    if region is not None:
        # the outline, as a band of rounding width: a strip's edges are computed, not given,
        # and lie off a mesh edge they should meet by some 1e-13 of the coordinates
        eps = 1e-8 * (1.0 + float(np.abs(region.bounds).max()))
        grown = region.buffer(eps, join_style="mitre")
        inner = region.buffer(-eps, join_style="mitre")
        keep = shapely.intersects_xy(grown, plan[:, 0], plan[:, 1])
        points, weights, face, plan = points[keep], weights[keep], face[keep], plan[keep]
        # a point on the outline counts only for the faces that reach inside the region
        on_rim = ~shapely.contains_xy(inner, plan[:, 0], plan[:, 1])
        rim = np.flatnonzero(on_rim)
        if len(rim):
            drop = rim[~_reaches_into(region, prep, face[rim])]
            if len(drop):
                keep = np.ones(len(face), bool)
                keep[drop] = False
                points, weights, face, plan = points[keep], weights[keep], face[keep], plan[keep]
                on_rim = on_rim[keep]
        bf, bary, bplan = _boundary_samples(region, prep, spacing)
        if len(bf):
            t = prep.tri[bf]
            bp = t[:, 0] + bary[:, :1] * (t[:, 1] - t[:, 0]) + bary[:, 1:] * (t[:, 2] - t[:, 0])
            points = np.concatenate([points, bp])
            weights = np.concatenate([weights, np.zeros(len(bf))])
            face = np.concatenate([face, bf])
            plan = np.concatenate([plan, bplan])
            on_rim = np.concatenate([on_rim, ~shapely.contains_xy(inner, bplan[:, 0], bplan[:, 1])])

    rot = transform[:3, :3]
    machine_normals = normals[face] @ rot.T
    undercut = undercut_flags(target, points, face, machine_normals)
    if region is not None and isinstance(target, TargetSurface):
        # on the outline only the faces inside the piece can hide a point: a sheet edge or a
        # step wall just beyond it belongs to the neighbour's block
        rim = np.flatnonzero(undercut & (machine_normals[:, 1] > 1e-9) & on_rim)
        if len(rim):
            undercut[rim] = occluded_points(
                target, points[rim], face[rim], counts=lambda f: _reaches_into(region, prep, f)
            )
    return TargetSamples(
        points=apply(transform, points),
        normals=machine_normals,
        weights=weights,
        undercut=undercut,
        plan_xy=plan,
        face=face,
        spacing_mm=spacing,
    )


def undercut_flags(
    target: Any, points: np.ndarray, face: np.ndarray, machine_normals: np.ndarray
) -> np.ndarray:
    """(k,) bool: samples at ``points`` (k, 3) mm, part frame, on faces ``face`` that the wire
    cannot reach: the face looks away from the wire's approach (machine normal ``n . +y <= 0``)
    or another part of the target lies over the sample toward the waste side
    (:func:`wirecut.geometry.occlusion.occluded_points`, for a real target)."""
    undercut = np.asarray(machine_normals, float)[:, 1] <= 1e-9
    if isinstance(target, TargetSurface):
        undercut |= occluded_points(target, points, face)
    return undercut


def judging_spacing(target: Any) -> float:
    """The lattice spacing (mm) of :func:`judging_samples`: the default rule's
    ``clip(edge, 1, 20)`` with the median edge raised to the target's detail spacing
    (:meth:`_Prepared.detail_spacing`) where the mesh is finer than its curvature needs,
    over ``sqrt(JUDGING_DENSITY)``. A coarse mesh keeps the default rule; a fine mesh of a
    smooth surface is no longer judged on ever more points (the sampling of a 1M-triangle
    panel no longer grows with its triangles)."""
    prep = _prepared(target)
    edge = max(prep.median_edge, prep.detail_spacing())
    return float(np.clip(edge, 1.0, 20.0)) / math.sqrt(JUDGING_DENSITY)


def judging_samples(
    target: Any, part_to_machine: np.ndarray, region: shapely.Geometry | np.ndarray
) -> TargetSamples:
    """The samples a piece is finally fitted on and its program judged on, by ``plan`` and
    ``simulate`` alike: the lattice at :func:`judging_spacing`, with the copies of a point
    that faces share merged (:meth:`TargetSamples.merged`). Where the mesh's edges are
    shorter than that spacing, each face is sampled at ``sqrt(2)`` times it (so that a fine
    face keeps just its corners and the lattice is the mesh's vertices) and the result
    thinned to one sample per plan cell of ``spacing / sqrt(2)`` (areas kept, outline
    samples kept): neighbouring samples stay within about ``sqrt(2)`` spacings, where the
    surface's chord sag is half :data:`DETAIL_SAG_MM`."""
    prep = _prepared(target)
    h = judging_spacing(target)
    if prep.median_edge >= h:
        return sample_target(target, part_to_machine, region, spacing_mm=h).merged()
    lattice = sample_target(target, part_to_machine, region, spacing_mm=math.sqrt(2.0) * h)
    return replace(lattice.merged().thinned(h / math.sqrt(2.0)), spacing_mm=h)
