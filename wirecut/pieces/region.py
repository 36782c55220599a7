"""Plan-view regions of the target: its footprint, strips across the wire, splits along the sweep.

The footprint is the union of the target's triangles projected on the plan (part frame plan
basis, :func:`wirecut.geometry.frames.plan_basis`). A union of hundreds of thousands of
triangles is slow in any polygon library, so it is built from the few edges that can carry its
boundary instead: an edge of the projected union is either a mesh boundary edge or a *fold*
edge whose two faces project with opposite orientation (a silhouette seen from above). Those
edges are noded into a planar arrangement (``shapely.polygonize``); each face of the
arrangement lies wholly inside or wholly outside the union, which one is decided by testing a
point inside it against the triangles (the faces whose boxes share its cell of a
:class:`~wirecut.geometry.plan_grid.PlanGrid`). Holes and several islands come out
right because they are faces of the arrangement like any other.

Strips and splits are intersections with bands between two lines in the plan: the planes
perpendicular to the wire (strips) or perpendicular to the sweep (splits). Two neighbours are
clipped by the same line coordinate, so they share their cut line exactly.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from wirecut.geometry.frames import DirectionFrame, plan_basis
from wirecut.geometry.plan_grid import PlanGrid
from wirecut.geometry.plan_shapes import triangle_polygons
from wirecut.geometry.vectors import cross

__all__ = [
    "footprint",
    "candidate_edges",
    "plan_axes",
    "band",
    "strip",
    "polygons_of",
    "extent_along",
    "kept_volume_mm3",
    "faces_near_boundary",
]


def _plan_triangles(vertices: np.ndarray, faces: np.ndarray, up: np.ndarray) -> np.ndarray:
    """Plan coordinates (m, 3, 2) mm of every triangle (part plan view)."""
    e1, e2, _ = plan_basis(up)
    v = np.asarray(vertices, float)
    uv = np.column_stack([v @ e1, v @ e2])
    return uv[np.asarray(faces, int)]


def candidate_edges(faces: np.ndarray, signed_area: np.ndarray, table=None) -> np.ndarray:
    """Edges (e, 2) int that may carry the footprint's boundary.

    Parameters
    ----------
    faces : (m, 3) int
        Triangle vertex indices.
    signed_area : (m,) float, mm^2
        Signed plan area of each triangle (positive counter-clockwise in the plan basis).
    table : EdgeTable, optional
        The faces' :func:`wirecut.geometry.mesh.edge_table`, when known (the target keeps
        one): its grouping is used instead of sorting the edges again.

    Returns
    -------
    (e, 2) int
        Boundary edges (used by one face) and fold edges (two faces whose plan orientations
        differ in sign, or one of them is degenerate in plan), smaller index first, in
        lexicographic order.
    """
    if table is None:
        from wirecut.geometry.mesh import edge_table

        table = edge_table(np.asarray(faces, np.int64), int(np.max(faces, initial=-1)) + 1)
    if len(table.edges) == 0:
        return np.zeros((0, 2), np.int64)
    sign = np.sign(np.round(signed_area, 12))[table.order // 3]
    gmin = np.minimum.reduceat(sign, table.first)
    gmax = np.maximum.reduceat(sign, table.first)
    keep = (table.counts == 1) | (gmin != gmax) | (gmin == 0)
    return table.edges[keep]


def footprint(
    vertices: np.ndarray,
    faces: np.ndarray,
    up: np.ndarray,
    grid: PlanGrid | None = None,
    table=None,
) -> BaseGeometry:
    """The target's plan-view footprint: union of its projected triangles.

    Parameters
    ----------
    vertices : (n, 3) float, mm, part frame
    faces : (m, 3) int
    up : (3,) float
        The part frame's up (the plan is perpendicular to it).
    grid : PlanGrid, optional
        The faces' plan boxes on a grid, named by face index, when the caller has one: it must
        hold at least every face whose doubled signed plan area exceeds 1e-9 mm^2 in
        magnitude (the faces below that are tested directly). Built here otherwise.
    table : EdgeTable, optional
        The faces' edge table, when known (see :func:`candidate_edges`).

    Returns
    -------
    shapely Polygon or MultiPolygon, mm, part plan view
        Holes and separate islands included. Empty when every triangle is vertical.
    """
    tri = _plan_triangles(vertices, faces, up)
    d1 = tri[:, 1] - tri[:, 0]
    d2 = tri[:, 2] - tri[:, 0]
    signed = 0.5 * (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])
    scale = max(1.0, float(np.abs(tri).max()))
    signed = np.where(np.abs(signed) < 1e-12 * scale * scale, 0.0, signed)
    e1, e2, _ = plan_basis(up)
    v = np.asarray(vertices, float)
    uv = np.column_stack([v @ e1, v @ e2])
    edges = candidate_edges(faces, signed, table)
    if len(edges) == 0:
        return Polygon()
    lines = shapely.linestrings(uv[edges])
    noded = shapely.union_all(lines)
    cells = np.asarray(shapely.get_parts(shapely.polygonize([noded])), dtype=object)
    if cells.size == 0:
        return Polygon()
    probes = shapely.point_on_surface(cells)
    good = signed != 0.0
    if grid is None:
        t = tri[good]
        grid = PlanGrid.covering(t.min(axis=1), t.max(axis=1), np.flatnonzero(good))
    # a cell is inside when a face with a plan area holds its probe: the grid gives each
    # probe the faces whose boxes share its grid cell, tested exactly
    inside = np.zeros(len(cells), bool)
    xy = shapely.get_coordinates(probes)
    for qi, fi in grid.candidates(xy):
        keep = good[fi]
        qi, fi = qi[keep], fi[keep]
        hit = shapely.intersects(probes[qi], triangle_polygons(tri[fi]))
        inside[qi[hit]] = True
    # faces the caller's grid may leave out (edge-on to within rounding): tested directly
    rest = np.flatnonzero(good & (np.abs(2.0 * signed) <= 2e-9))
    if len(rest):
        hit = shapely.STRtree(triangle_polygons(tri[rest])).query(probes, predicate="intersects")
        inside[hit[0]] = True
    out = shapely.union_all(cells[inside])
    return shapely.make_valid(out) if not out.is_valid else out


def plan_axes(frame: DirectionFrame, up: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unit plan vectors (2,) of the sweep (machine x) and of the wire (machine z).

    Both are given in the part plan basis (e1, e2); ``p_plan . sweep`` is the machine x of a
    point before placement, ``p_plan . wire`` its machine z before placement.
    """
    e1, e2, _ = plan_basis(up)
    r = np.asarray(frame.rotation, float)
    sweep = np.array([r[0] @ e1, r[0] @ e2])
    wire = np.array([r[2] @ e1, r[2] @ e2])
    return sweep / np.linalg.norm(sweep), wire / np.linalg.norm(wire)


def extent_along(geom: BaseGeometry, axis: np.ndarray) -> tuple[float, float]:
    """Min and max (mm) of ``p . axis`` over the vertices of a plan geometry."""
    coords = shapely.get_coordinates(geom)
    if len(coords) == 0:
        return (0.0, 0.0)
    s = coords @ np.asarray(axis, float)
    return (float(s.min()), float(s.max()))


def band(geom: BaseGeometry, axis: np.ndarray, lo: float, hi: float) -> Polygon:
    """The band ``lo <= p . axis <= hi`` (plan, mm) as a polygon large enough to cover ``geom``."""
    axis = np.asarray(axis, float)
    axis = axis / np.linalg.norm(axis)
    other = np.array([-axis[1], axis[0]])
    o_lo, o_hi = extent_along(geom, other)
    pad = 1.0 + 0.01 * (o_hi - o_lo)
    o_lo, o_hi = o_lo - pad, o_hi + pad
    corners = [
        lo * axis + o_lo * other,
        hi * axis + o_lo * other,
        hi * axis + o_hi * other,
        lo * axis + o_hi * other,
    ]
    return Polygon(corners)


def polygons_of(geom: BaseGeometry, min_area_mm2: float = 1e-6) -> list[Polygon]:
    """The polygons of a clipping result (drops points, lines and slivers below ``min_area``)."""
    out = []
    for g in shapely.get_parts(geom):
        if isinstance(g, Polygon) and g.area > min_area_mm2:
            out.append(g)
        elif isinstance(g, MultiPolygon) or g.geom_type == "GeometryCollection":
            out.extend(polygons_of(g, min_area_mm2))
    return out


def strip(geom: BaseGeometry, axis: np.ndarray, lo: float, hi: float) -> BaseGeometry:
    """``geom`` clipped to the band ``lo <= p . axis <= hi`` (plan, mm).

    With ``axis`` the wire's plan vector this is a strip across the wire (between two planes
    perpendicular to the wire); with the sweep's plan vector it is a split along the sweep.
    """
    if hi <= lo:
        return Polygon()
    clipped = shapely.intersection(geom, band(geom, axis, lo, hi))
    parts = polygons_of(clipped)
    if not parts:
        return Polygon()
    return parts[0] if len(parts) == 1 else MultiPolygon(parts)


def kept_volume_mm3(
    vertices: np.ndarray,
    faces: np.ndarray,
    up: np.ndarray,
    rotation: np.ndarray,
    base_y: float,
    region: BaseGeometry,
    near: np.ndarray | None = None,
) -> float:
    """Foam volume (mm^3) under the target surface down to the base plane, inside ``region``.

    Heights are machine y (``rotation`` part -> machine applied to the vertices, before the
    translation), so the kept foam is always below the surface toward machine -y and
    ``base_y`` is the base plane in the same rotated frame. Each triangle is clipped to the
    region in plan; the height is linear over a triangle, so the volume over a clipped piece
    is its plan area times (height at the piece's centroid - base_y), exact for the
    piecewise-linear surface. Triangles facing away from the waste side in plan (folds) count
    negative, so an overhang's underside is subtracted.

    Parameters
    ----------
    vertices : (n, 3) float, mm, part frame
    faces : (m, 3) int
    up : (3,) float, part frame up
    rotation : (3, 3) float, part -> machine rotation
    base_y : float, mm, rotated machine frame
    region : shapely geometry, mm, part plan view
    near : (m,) bool, optional
        The faces that may meet the region's boundary (see :func:`faces_near_boundary`);
        the others lie wholly inside or wholly outside the region and are told apart by
        their centroids, without a polygon each. Default: every face is tested exactly.
    """
    v = np.asarray(vertices, float)
    f = np.asarray(faces, int)
    e1, e2, _ = plan_basis(up)
    # the corners of these faces only (a region's faces are a small share of a large mesh)
    p = v[f]
    tri = np.stack([p @ e1, p @ e2], axis=-1)
    hf = p @ np.asarray(rotation, float)[1]
    d1 = tri[:, 1] - tri[:, 0]
    d2 = tri[:, 2] - tri[:, 0]
    signed = 0.5 * (d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0])
    # orientation toward the waste side: the triangle's 3D normal . machine y
    n3 = cross(p[:, 1] - p[:, 0], p[:, 2] - p[:, 0])
    toward = np.sign(n3 @ np.asarray(rotation, float)[1])
    ok = (signed != 0.0) & (toward != 0.0)
    if not np.any(ok):
        return 0.0
    idx = np.flatnonzero(ok)
    area_all = np.abs(signed)
    shapely.prepare(region)
    inside = np.zeros(len(idx), bool)
    touch = np.zeros(len(idx), bool)
    exact = np.ones(len(idx), bool) if near is None else np.asarray(near, bool)[idx]
    exact |= np.abs(2.0 * signed[idx]) <= 2e-9  # faces a grid may leave out: edge-on in plan
    if not exact.all():  # wholly inside or outside: the centroid tells which
        far = ~exact
        c = tri[idx[far]].mean(axis=1)
        inside[far] = shapely.contains_xy(region, c[:, 0], c[:, 1])
    polys = triangle_polygons(tri[idx[exact]])
    within = shapely.contains(region, polys)
    inside[exact] = within
    touch[exact] = shapely.intersects(region, polys) & ~within
    hmean = hf.mean(axis=1)
    full = idx[inside]
    vol = float(np.sum(area_all[full] * toward[full] * (hmean[full] - base_y)))
    if np.any(touch):
        clipped = shapely.intersection(polys[touch[exact]], region)  # touch lies in exact
        area = shapely.area(clipped)
        nz = area > 0
        part_idx = idx[touch][nz]
        clipped = clipped[nz]
        c = shapely.get_coordinates(shapely.centroid(clipped))
        t = tri[part_idx]
        a0 = t[:, 0]
        m = np.stack([t[:, 1] - a0, t[:, 2] - a0], axis=2)
        lam = np.linalg.solve(m, (c - a0)[:, :, None])[:, :, 0]
        hh = hf[part_idx]
        # the height is linear over the triangle: evaluate it at the clipped piece's centroid
        hc = hh[:, 0] + lam[:, 0] * (hh[:, 1] - hh[:, 0]) + lam[:, 1] * (hh[:, 2] - hh[:, 0])
        vol += float(np.sum(area[nz] * toward[part_idx] * (hc - base_y)))
    return vol


def faces_near_boundary(grid: PlanGrid, region: BaseGeometry, m: int) -> np.ndarray:
    """(m,) bool: the faces of ``grid`` (face indices below ``m``) whose plan boxes may meet
    the boundary of ``region``; every other face of the grid lies wholly inside or wholly
    outside the region.

    The boundary is sampled at most half a grid cell apart, and every face entered in a cell
    within one cell of a sample is marked: a point where a box meets the boundary lies within
    a quarter cell of a sample, so in a cell next to the sample's (or the same)."""
    out = np.zeros(m, bool)
    edge = shapely.boundary(region)
    if edge is None or shapely.is_empty(edge):
        return out
    pts = shapely.get_coordinates(shapely.segmentize(edge, 0.5 * grid.cell))
    ij = np.floor((pts - grid.lo) / grid.cell).astype(np.int64)
    step = np.array([(a, b) for a in (-1, 0, 1) for b in (-1, 0, 1)], np.int64)
    ij = (ij[:, None, :] + step[None]).reshape(-1, 2)
    ok = (ij >= 0).all(axis=1) & (ij[:, 0] < grid.nx) & (ij[:, 1] < grid.ny)
    keys = np.unique(ij[ok, 0] * grid.ny + ij[ok, 1])
    start = np.searchsorted(grid.key, keys, side="left")
    stop = np.searchsorted(grid.key, keys, side="right")
    count = stop - start
    pos = np.repeat(start - (np.cumsum(count) - count), count) + np.arange(int(count.sum()))
    out[grid.item[pos]] = True
    return out
