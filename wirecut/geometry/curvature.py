"""Discrete curvature of the target surface, per vertex.

Gaussian curvature
    ``K = angle defect / mixed Voronoi area`` (Meyer, Desbrun, Schroeder, Barr 2003, "Discrete
    differential-geometry operators for triangulated 2-manifolds", sec. 3.3 and 4). The defect is
    ``2 pi - sum of the corner angles`` at the vertex; the mixed area is the Voronoi area of the
    vertex in each non-obtuse triangle, half the triangle for the obtuse corner and a quarter for
    the other two. The mixed areas of all vertices add up to the surface area exactly, so they are
    also the vertex weights of every area fraction. Boundary vertices (on an edge used by one face)
    get NaN: their defect measures the boundary's turning, not curvature. Vertices one ring from
    the boundary keep their value: their star is complete, so the defect is exact there.

Principal curvatures and directions
    A height function ``h(u, v) = a u^2 + b u v + c v^2 + d u + e v`` plus the four cubic terms
    (the cubic-order fit of Goldfeather and Interrante 2004, ACM TOG 23(1), which keeps the
    quadratic part unbiased where the neighbourhood is lopsided, as near a boundary), fitted by
    least squares to the vertex's 2-ring (at most 32 neighbours) in the tangent frame of its
    area-weighted normal; the linear terms absorb a tilted normal. Vertices with fewer than 12
    neighbours drop the cubic terms. The shape operator of the graph ``(u, v, h)`` at the origin,
    ``S = I^-1 II`` with ``I = [[1+d^2, de], [de, 1+e^2]]`` and
    ``II = [[2a, b], [b, 2c]] / sqrt(1+d^2+e^2)`` (do Carmo, sec. 3-3, graph of a function), gives
    ``k1 >= k2``, the mean curvature ``(k1 + k2) / 2`` and the principal directions. Sign: a normal
    curvature is positive where the surface bends toward the waste-side normal (a valley seen from
    the waste side), negative on a crest. All vertices are fitted in one batch of 9x9 normal
    equations, in chunks to bound memory.

Patch Gaussian curvature
    ``gaussian_patch`` sums the defects and mixed areas of the interior vertices of the 2-ring
    patch (vertex included) and divides: the discrete Gauss-Bonnet integral over the patch. Noise
    of a jittered triangulation largely cancels in the sum (on a sine profile extruded over an
    irregular mesh, the 5-95 percentile band of K shrank tenfold), so the classes use it.

Asymptotic directions
    Where the surface is saddle-shaped (``K < 0`` by the patch defect, ``k1 > 0 > k2`` by the fit),
    Euler's formula ``k_n(t) = k1 cos^2 t + k2 sin^2 t`` vanishes at ``tan^2 t = -k1 / k2``: the two
    directions ``cos t dir1 +- sin t dir2`` along which a straight line is tangent to second order.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import sparse

from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.roughness import Roughness, mesh_roughness
from wirecut.geometry.vectors import cross

__all__ = ["Curvature", "vertex_curvature", "angle_defects", "mixed_areas", "tangent_frames"]

_CHUNK = 2_500  # vertices per batch of the quadric fit (its tables stay in the cache)
_FORK_VERTICES = 20_000  # a fit of fewer vertices stays in this process
_NP = 9  # coefficients of the cubic height fit
# exponents (a, b) of its monomials u^a v^b, in coefficient order
_EXPONENTS = ((2, 0), (1, 1), (0, 2), (1, 0), (0, 1), (3, 0), (2, 1), (1, 2), (0, 3))
_MAX_RING = 32  # neighbours per vertex used by the fit at most
_EXP_A = np.array([a for a, _ in _EXPONENTS])
_EXP_B = np.array([b for _, b in _EXPONENTS])
# moment (a, b) indices of each normal-equation entry (i, j): u^(ai + aj) v^(bi + bj)
_PAIR_A = _EXP_A[:, None] + _EXP_A[None, :]
_PAIR_B = _EXP_B[:, None] + _EXP_B[None, :]
# the right-hand side's rows grouped by the power of u in their monomial
_RHS_ROWS = tuple((a, np.flatnonzero(_EXP_A == a)) for a in range(4))


@dataclass(frozen=True, eq=False)
class Curvature:
    """Per-vertex curvature of a target surface (part frame).

    Attributes
    ----------
    gaussian : (n,) float, 1/mm^2
        Angle defect / mixed area; NaN at boundary vertices.
    interior : (n,) bool
        True where ``gaussian`` is defined (not on the boundary).
    vertex_area : (n,) float, mm^2
        Mixed Voronoi area; sums to the surface area.
    k1, k2 : (n,) float, 1/mm
        Principal curvatures from the 2-ring quadric fit, ``k1 >= k2`` (sign: see module doc).
    mean : (n,) float, 1/mm
        ``(k1 + k2) / 2``.
    dir1, dir2 : (n, 3) float, unit, part frame
        Principal directions of ``k1`` and ``k2``, tangent to the surface.
    asymptotic : (n, 2, 3) float, unit, part frame
        The two directions of zero normal curvature; NaN where the surface is not saddle-shaped.
    normals : (n, 3) float, unit, part frame
        Vertex normals used for the fit, toward the waste side.
    gaussian_patch : (n,) float, 1/mm^2
        Gaussian curvature integrated over the vertex's 2-ring patch: the sum of the interior
        defects over the sum of their mixed areas (the discrete Gauss-Bonnet integral, far less
        sensitive to an irregular triangulation than the per-vertex ratio); NaN where the patch
        holds no interior vertex.
    roughness : Roughness or None
        The vertices' scatter about smooth local fits on the same 2-rings and frames
        (:func:`wirecut.geometry.roughness.mesh_roughness`), crease vertices left out.
    """

    gaussian: np.ndarray
    interior: np.ndarray
    vertex_area: np.ndarray
    k1: np.ndarray
    k2: np.ndarray
    mean: np.ndarray
    dir1: np.ndarray
    dir2: np.ndarray
    asymptotic: np.ndarray
    normals: np.ndarray
    gaussian_patch: np.ndarray
    roughness: Roughness | None = None

    def normal_curvature(self, direction: np.ndarray) -> np.ndarray:
        """(n,) 1/mm: Euler's formula ``k1 cos^2 t + k2 sin^2 t`` for tangent directions (n, 3)."""
        c = np.einsum("ij,ij->i", direction, self.dir1)
        s = np.einsum("ij,ij->i", direction, self.dir2)
        r2 = c * c + s * s
        r2 = np.where(r2 > 0, r2, 1.0)
        return (self.k1 * c * c + self.k2 * s * s) / r2


def _corner_angles(tri: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Interior angle (m, 3) radians at each corner of triangles (m, 3, 3), their areas (m,),
    and the squared length (m, 3) of the edge opposite each corner.

    Any two edges of a triangle span twice its area, so one cross product gives the sine part
    of all three angles: ``angle = atan2(2 A, -e_in . e_out)``."""
    a = tri[:, 1] - tri[:, 0]
    b = tri[:, 2] - tri[:, 1]
    c = tri[:, 0] - tri[:, 2]
    cx = a[:, 1] * c[:, 2] - a[:, 2] * c[:, 1]
    cy = a[:, 2] * c[:, 0] - a[:, 0] * c[:, 2]
    cz = a[:, 0] * c[:, 1] - a[:, 1] * c[:, 0]
    twice = np.sqrt(cx * cx + cy * cy + cz * cz)

    def dot(u: np.ndarray, v: np.ndarray) -> np.ndarray:
        return u[:, 0] * v[:, 0] + u[:, 1] * v[:, 1] + u[:, 2] * v[:, 2]

    ang = np.arctan2(twice[:, None], -np.column_stack([dot(a, c), dot(b, a), dot(c, b)]))
    opposite2 = np.column_stack([dot(b, b), dot(c, c), dot(a, a)])
    return ang, 0.5 * twice, opposite2


def angle_defects(vertices: np.ndarray, faces: np.ndarray, angles=None) -> np.ndarray:
    """(n,) radians: ``2 pi`` minus the sum of corner angles at each vertex.

    On a closed genus-0 mesh these add up to ``4 pi`` (Descartes' theorem on total angular defect;
    discrete Gauss-Bonnet). ``angles`` is :func:`_corner_angles` of the faces when known.
    """
    ang = (angles if angles is not None else _corner_angles(vertices[faces]))[0]
    total = np.bincount(faces.ravel(), weights=ang.ravel(), minlength=len(vertices))
    return 2.0 * np.pi - total


def mixed_areas(vertices: np.ndarray, faces: np.ndarray, angles=None) -> np.ndarray:
    """(n,) mm^2: mixed Voronoi area of each vertex (Meyer et al. 2003, fig. 4).

    Non-obtuse triangle: the Voronoi part ``(|PR|^2 cot Q + |PQ|^2 cot R) / 8`` at corner P;
    obtuse triangle: half its area to the obtuse corner, a quarter to each other corner.
    ``angles`` is :func:`_corner_angles` of the faces when known.
    """
    ang, area, opp2 = angles if angles is not None else _corner_angles(vertices[faces])
    cot = 1.0 / np.tan(np.clip(ang, 1e-12, np.pi - 1e-12))
    # corner i gets (|edge opp j|^2 cot j + |edge opp k|^2 cot k) / 8 for the other corners j, k
    vor = (
        np.column_stack(
            [
                opp2[:, 1] * cot[:, 1] + opp2[:, 2] * cot[:, 2],
                opp2[:, 2] * cot[:, 2] + opp2[:, 0] * cot[:, 0],
                opp2[:, 0] * cot[:, 0] + opp2[:, 1] * cot[:, 1],
            ]
        )
        / 8.0
    )
    obtuse = ang > np.pi / 2
    any_obtuse = obtuse.any(axis=1)
    share = np.where(obtuse, 0.5, 0.25) * area[:, None]
    per_corner = np.where(any_obtuse[:, None], share, vor)
    return np.bincount(faces.ravel(), weights=per_corner.ravel(), minlength=len(vertices))


def tangent_frames(normals: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Two unit tangents (n, 3) each, with (t1, t2, normal) right-handed."""
    ref = np.zeros_like(normals)
    use_x = np.abs(normals[:, 0]) < 0.9
    ref[use_x, 0] = 1.0
    ref[~use_x, 1] = 1.0
    t1 = ref - np.einsum("ij,ij->i", ref, normals)[:, None] * normals
    t1 /= np.linalg.norm(t1, axis=1, keepdims=True)
    t2 = cross(normals, t1)
    return t1, t2


def _two_ring(edges: np.ndarray, n: int) -> sparse.csr_matrix:
    """Sparse (n, n) pattern of the 2-ring neighbourhood of each vertex (self excluded), from
    the mesh's unique undirected edges (e, 2): a one for each neighbour, so that ``ring @ x``
    sums x over the ring, and each row's neighbours in ascending order.

    The 2-ring is the pattern of ``A @ A`` for the 1-ring adjacency A, the diagonal removed:
    every edge of a triangle mesh lies on a triangle, so its two ends are also joined by a
    path of two edges and the 1-ring is already inside ``A @ A``."""
    i = np.concatenate([edges[:, 0], edges[:, 1]])
    j = np.concatenate([edges[:, 1], edges[:, 0]])
    one = sparse.csr_matrix((np.ones(len(i), np.float32), (i, j)), shape=(n, n))
    two = one @ one
    two.setdiag(0)
    two.eliminate_zeros()
    two.sort_indices()
    two.data[:] = 1.0
    return two


def cholesky_solve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Solve ``a[:, :, k] x[:, k] = b[:, k]`` for a stack of symmetric positive definite systems.

    ``a`` (n, n, m) is read in its lower triangle only and overwritten with the Cholesky factor
    L (``a = L L^T``, the Cholesky-Banachiewicz order, row by row; Golub and Van Loan, *Matrix
    Computations*, sec. 4.2); ``b`` is (n, m). Each step works on all m systems at once, along
    the last axis, so a stack of many small systems costs a few array operations per entry
    instead of a LAPACK call per system (``numpy.linalg.solve`` loops over the stack). A pivot
    that rounding drives to zero or below is held at 1e-300 instead of taking the square root
    of a negative number (the quadric fit's ridge keeps its pivots far above that).
    """
    n = a.shape[0]
    for j in range(n):
        pivot = a[j, j] - np.einsum("km,km->m", a[j, :j], a[j, :j])
        pivot = np.sqrt(np.maximum(pivot, 1e-300))
        a[j, j] = pivot
        if j + 1 < n:
            below = a[j + 1 :, j] - np.einsum("ikm,km->im", a[j + 1 :, :j], a[j, :j])
            a[j + 1 :, j] = below / pivot
    y = np.empty_like(b)
    for i in range(n):  # L y = b
        y[i] = (b[i] - np.einsum("km,km->m", a[i, :i], y[:i])) / a[i, i]
    x = np.empty_like(b)
    for i in range(n - 1, -1, -1):  # L^T x = y
        x[i] = (y[i] - np.einsum("km,km->m", a[i + 1 :, i], x[i + 1 :])) / a[i, i]
    return x


def _fit_chunk(columns, normals, t1, t2, indptr, indices, start: int, stop: int) -> np.ndarray:
    """Coefficients (stop - start, 9) of the height fits of vertices start..stop-1.

    ``columns`` holds the vertices' x, y and z as three contiguous (n,) arrays.

    Each vertex's first ``_MAX_RING`` neighbours (in ring order) are laid out as one column of
    an (r, m) table, r the chunk's largest count; a short column is padded with the vertex
    itself, whose offset (0, 0, 0) adds nothing to any sum below. Sums over a column then run
    over the table's first axis, contiguous per row, instead of scattering into bins.
    """
    m = stop - start
    count = np.minimum(np.diff(indptr[start : stop + 1]), _MAX_RING)
    r = int(count.max()) if m else 0
    pos = np.arange(r)[:, None]
    at = np.minimum(indptr[start:stop][None, :] + pos, max(len(indices) - 1, 0))
    own = np.arange(start, stop)[None, :]
    table = np.where(pos < count[None, :], indices[at], own) if len(indices) else own[:0]
    # offsets (r, m) per coordinate, zero where padded, and their components in the frame
    dx, dy, dz = (col[table] - col[start:stop] for col in columns)

    def component(axis: np.ndarray) -> np.ndarray:
        a = axis[start:stop]
        return dx * a[:, 0] + dy * a[:, 1] + dz * a[:, 2]

    u, v, h = component(t1), component(t2), component(normals)
    # scale each vertex's coordinates by its neighbourhood size for conditioning
    scale = np.sqrt((u * u + v * v).sum(axis=0))
    scale = np.where(scale > 0, scale / np.sqrt(np.maximum(count, 1)), 1.0)
    inv = 1.0 / scale
    us, vs, hs = u * inv, v * inv, h * inv
    # the normal equations are sums over the neighbours of products of monomials u^a v^b:
    # the moments sum u^a v^b (a + b <= 6) and the sums h u^a v^b of the nine monomials
    pu = np.empty((7, r, m))
    pv = np.empty((7, r, m))
    pu[0] = pv[0] = 1.0
    for k in range(1, 7):
        np.multiply(pu[k - 1], us, out=pu[k])
        np.multiply(pv[k - 1], vs, out=pv[k])
    moment = np.zeros((7, 7, m))
    for a in range(7):
        moment[a, : 7 - a] = np.einsum("rm,brm->bm", pu[a], pv[: 7 - a])
    atb = np.empty((_NP, m))
    for a, rows in _RHS_ROWS:
        hm = np.einsum("rm,brm->bm", pu[a] * hs, pv[: 4 - a])
        atb[rows] = hm[_EXP_B[rows]]
    ata = moment[_PAIR_A, _PAIR_B]  # (9, 9, m), a fresh array
    few = count < 12
    ata[5:, :, few] = 0.0
    ata[:, 5:, few] = 0.0
    atb[5:, few] = 0.0
    for i in range(5, _NP):
        ata[i, i, few] = 1.0  # the cubic terms fixed at zero
    # a tiny ridge keeps vertices with too few neighbours solvable (they come out flat)
    diagonal = np.arange(_NP)
    ata[diagonal, diagonal] += 1e-9
    sol = cholesky_solve(ata, atb).T
    # h/s = (a s)(u/s)^2 + d (u/s) + (f s^2)(u/s)^3: undo the scaling
    sol[:, :3] /= scale[:, None]
    sol[:, 5:] /= (scale**2)[:, None]
    return sol


@dataclass(frozen=True, eq=False)
class _CreaseCut:
    """The target cut open along its creases: each vertex on a crease has one copy per side.

    ``source`` (c,) names each copy's vertex, ``pick`` (n,) the copy each vertex takes its fit
    from (the side with the most face area around it), ``on_crease`` (n,) the vertices with
    more than one copy; ``vertices``, ``normals`` (area-weighted over each side's faces) and
    ``ring`` (the 2-ring on the cut mesh) are per copy."""

    vertices: np.ndarray
    normals: np.ndarray
    ring: sparse.csr_matrix
    source: np.ndarray
    pick: np.ndarray
    on_crease: np.ndarray


def _crease_cut(target: TargetSurface) -> _CreaseCut | None:
    """The target cut along its crease edges, or None when it has none or when more than
    :data:`wirecut.geometry.creases.CREASE_SHARE` of its inner edges are creases (a coarse
    tessellation of a smooth surface, whose fits and patches are not cut).

    A quadric fitted across a crease (a fold, the foot or top of a step) sees both sides and
    reports a curvature neither has, and the patch sums of the Gaussian curvature take in the
    crease's own defect: a folded plate of developable facets read 71 % developable. The
    faces are grouped into the connected sides between creases (scipy's connected components
    over the face adjacency without the crease edges), each vertex gets one copy per side it
    touches, and the fits and patches run on that cut mesh."""
    from wirecut.geometry.creases import crease_sides

    cut = crease_sides(target)
    if cut is None:
        return None
    sides, side = cut
    fn = np.asarray(target.face_normals, float)
    n = len(target.vertices)
    faces = np.asarray(target.faces, np.int64)
    key = faces * sides + side[:, None]
    copies, inverse = np.unique(key.ravel(), return_inverse=True)
    cut_faces = inverse.reshape(-1, 3)
    source = copies // sides
    c = len(copies)
    areas = np.asarray(target.face_areas, float)
    weighted = fn * areas[:, None]
    corner = cut_faces.ravel()
    acc = np.column_stack(
        [np.bincount(corner, weights=np.repeat(weighted[:, j], 3), minlength=c) for j in range(3)]
    )
    norm = np.linalg.norm(acc, axis=1, keepdims=True)
    normals = np.divide(acc, norm, out=np.zeros_like(acc), where=norm > 0)
    around = np.bincount(cut_faces.ravel(), weights=np.repeat(areas, 3), minlength=c)
    order = np.lexsort((-around, source))  # by vertex, its widest side first
    starts = np.flatnonzero(np.r_[True, np.diff(source[order]) != 0])
    pick = np.empty(n, np.int64)
    pick[source[order[starts]]] = order[starts]
    on_crease = np.bincount(source, minlength=n) > 1
    from wirecut.geometry.mesh import edge_table

    ring = _two_ring(edge_table(cut_faces, c).edges, c)
    return _CreaseCut(
        np.asarray(target.vertices, float)[source], normals, ring, source, pick, on_crease
    )


def _fit_quadrics(
    vertices: np.ndarray, normals: np.ndarray, ring: sparse.csr_matrix, meanwhile=None
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares fit coefficients (n, 9) in frames (t1, t2, normal), and t1, t2.

    ``h = a u^2 + b u v + c v^2 + d u + e v + f u^3 + g u^2 v + p u v^2 + q v^3``: the cubic terms
    (as in the cubic-order fit of Goldfeather and Interrante 2004, "A novel cubic-order algorithm
    for approximating principal direction vectors") keep the quadratic ones unbiased where the
    neighbourhood is lopsided, near a boundary. Vertices with fewer than 12 neighbours use the
    first five terms only. ``meanwhile`` (a callable), if given, is called while worker
    processes fit (before this process fits its own share).
    """
    from wirecut.workers import background, worker_count

    n = len(vertices)
    t1, t2 = tangent_frames(normals)
    indptr, indices = ring.indptr, ring.indices
    columns = tuple(np.ascontiguousarray(vertices[:, k]) for k in range(3))

    def fit_range(span: tuple[int, int]) -> np.ndarray:
        out = np.zeros((span[1] - span[0], _NP))
        for start in range(span[0], span[1], _CHUNK):
            stop = min(span[1], start + _CHUNK)
            out[start - span[0] : stop - span[0]] = _fit_chunk(
                columns, normals, t1, t2, indptr, indices, start, stop
            )
        return out

    # independent per vertex: a large mesh is fitted in runs, all but the first in worker
    # processes; the first (smaller, as this process has ``meanwhile`` to do too) here
    runs = worker_count() if n >= _FORK_VERTICES else 1
    share = np.r_[0.0, 0.5, np.full(runs - 1, 1.0)] if runs > 1 else np.r_[0.0, 1.0]
    edges = np.rint(n * np.cumsum(share) / share.sum()).astype(int)
    spans = [(int(a), int(b)) for a, b in zip(edges[:-1], edges[1:], strict=True)]
    later = [background(lambda s=s: fit_range(s)) for s in spans[1:]]
    if meanwhile is not None:
        meanwhile()
    parts = [fit_range(spans[0])] + [job.result() for job in later]
    coef = np.concatenate(parts) if n else np.zeros((0, _NP))
    return coef, t1, t2


def vertex_curvature(target: TargetSurface, after_fit=None) -> Curvature:
    """Gaussian, principal and mean curvature, principal and asymptotic directions per vertex.

    Parameters
    ----------
    target : TargetSurface
        Normals oriented toward the waste side.

    after_fit : callable () -> None, optional
        Called once the quadric fits' worker processes have ended (before the rest of the
        curvature is derived): where a caller may start a thread without a fork to follow.

    Returns
    -------
    Curvature
        See the module docstring for the methods and the sign convention.
    """
    v, f = target.vertices, target.faces
    n = len(v)
    cut = _crease_cut(target)
    if cut is None:
        fit_v, normals = v, target.vertex_normals
        ring = _two_ring(target.edge_table.edges, n)
    else:  # the fits and patches of each side of a crease see that side only
        fit_v, normals, ring = cut.vertices, cut.normals, cut.ring
    angle: dict[str, np.ndarray] = {}

    def angles() -> None:  # the defect curvature, while the quadrics are fitted
        boundary = target.boundary_vertices
        corners = _corner_angles(v[f])
        angle["area"] = area = mixed_areas(v, f, corners)
        angle["defect"] = defect = angle_defects(v, f, corners)
        with np.errstate(divide="ignore", invalid="ignore"):
            angle["gauss"] = np.where(~boundary & (area > 0), defect / area, np.nan)

    coef, t1, t2 = _fit_quadrics(fit_v, normals, ring, meanwhile=angles)
    if after_fit is not None:
        after_fit()
    # the scatter about smooth fits on the same rings: a crease's vertices are left out
    smooth = None if cut is None else cut.pick[~cut.on_crease]
    roughness = mesh_roughness(fit_v, normals, t1, t2, ring, smooth)
    area, defect, gauss = angle["area"], angle["defect"], angle["gauss"]
    interior = np.isfinite(gauss)
    # sums over the patch: the ring's plus the vertex's own (no ring-plus-identity matrix)
    inner_defect = np.where(interior, defect, 0.0)
    inner_area = np.where(interior, area, 0.0)
    if cut is not None:
        # a crease's own defects are the crease's, not either side's: left out of the patches
        inner_defect = np.where(cut.on_crease, 0.0, inner_defect)[cut.source]
        inner_area = np.where(cut.on_crease, 0.0, inner_area)[cut.source]
    patch_area = ring @ inner_area + inner_area
    with np.errstate(divide="ignore", invalid="ignore"):
        gauss_patch = np.where(
            patch_area > 0, (ring @ inner_defect + inner_defect) / patch_area, np.nan
        )
    if cut is not None:  # each vertex takes the values of its copy on its widest side
        coef, t1, t2 = coef[cut.pick], t1[cut.pick], t2[cut.pick]
        normals, gauss_patch = normals[cut.pick], gauss_patch[cut.pick]
    a, b, c, d, e = coef[:, :5].T
    E, F, G = 1.0 + d * d, d * e, 1.0 + e * e
    g = np.sqrt(1.0 + d * d + e * e)
    L, M, N = 2.0 * a / g, b / g, 2.0 * c / g
    det_i = E * G - F * F
    kk = (L * N - M * M) / det_i
    hh = (E * N - 2.0 * F * M + G * L) / (2.0 * det_i)
    disc = np.sqrt(np.maximum(hh * hh - kk, 0.0))
    k1, k2 = hh + disc, hh - disc

    def direction(k: np.ndarray, fallback: np.ndarray) -> np.ndarray:
        # (II - k I) x = 0: two candidate rows of the null space, take the longer
        r1 = np.column_stack([M - k * F, -(L - k * E)])
        r2 = np.column_stack([N - k * G, -(M - k * F)])
        r = np.where((np.abs(r1).sum(1) >= np.abs(r2).sum(1))[:, None], r1, r2)
        xu = t1 + d[:, None] * normals
        xv = t2 + e[:, None] * normals
        vec = r[:, :1] * xu + r[:, 1:] * xv
        vec -= np.einsum("ij,ij->i", vec, normals)[:, None] * normals
        norm = np.linalg.norm(vec, axis=1, keepdims=True)
        ok = norm[:, 0] > 1e-12 * (np.abs(r).sum(1) + 1e-300)
        return np.where(ok[:, None], vec / np.where(norm > 0, norm, 1.0), fallback)

    dir1 = direction(k1, t1)
    dir2 = cross(normals, dir1)
    # keep dir2 the k2 direction exactly orthogonal to dir1 in the tangent plane
    saddle = (k1 > 0) & (k2 < 0) & ~(np.isfinite(gauss_patch) & ~(gauss_patch < 0))
    asym = np.full((n, 2, 3), np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        theta = np.arctan(np.sqrt(-k1[saddle] / k2[saddle]))
    ct, st = np.cos(theta)[:, None], np.sin(theta)[:, None]
    asym[saddle, 0] = ct * dir1[saddle] + st * dir2[saddle]
    asym[saddle, 1] = ct * dir1[saddle] - st * dir2[saddle]
    return Curvature(
        gaussian=gauss,
        interior=interior,
        vertex_area=area,
        k1=k1,
        k2=k2,
        mean=0.5 * (k1 + k2),
        dir1=dir1,
        dir2=dir2,
        asymptotic=asym,
        normals=normals,
        gaussian_patch=gauss_patch,
        roughness=roughness,
    )
