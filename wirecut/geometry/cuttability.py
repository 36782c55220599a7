"""Where a straight hot wire can cut the target within tolerance: classes, wire reach, undercut.

Classes (per vertex, ``kind``)
    0 developable: the less-curved principal curvature ``k_min = |K| / max(|k1|, |k2|)`` is so
    small that bending a flat sheet along the other direction leaves a sagitta
    ``k_min L^2 / 8`` within the allowed error ``s`` over the characteristic length
    ``L = min(span - 2 face_to_tower, surface extent)``: ``k_min <= 8 s / L^2``;
    1 ruled: ``K < 0`` (two asymptotic directions: a straight line lies in the surface to first
    order); 2 synclastic: ``K > 0``. ``K`` here is the 2-ring patch curvature
    (``Curvature.gaussian_patch``, the Gauss-Bonnet integral over the patch), or ``k1 k2`` of the
    fit when the patch holds no interior vertex.
    Boundary vertices take the class, reach and direction of the nearest interior vertex.

Allowed error ``s`` of a straight line against the surface, by policy
    ``balanced``: the best line equioscillates (Chebyshev alternation), so a chord whose sagitta is
    ``s = 2 tol`` deviates at most ``tol`` each way; ``no-gouge``: the line may not enter the part,
    so the whole sagitta counts, ``s = tol``.

Wire reach (per vertex, mm)
    Synclastic points: the chord in the direction of least normal curvature ``k = min(|k1|, |k2|)``
    whose sagitta is ``s``: ``w = 2 sqrt(R^2 - (R - s)^2)``, ``R = 1/k`` (standard circle
    geometry; ``w = 2R`` when ``s >= R``). Developable and ruled points have a direction of zero
    normal curvature (the ruling, or the two asymptotic directions), so second order gives no
    limit: the reach is **measured** by marching along the tangent line through the vertex in
    both directions, in steps ``h = extent / 128``, taking the signed distance of
    each line point from the surface (nearest vertex, its tangent plane plus the second-order term
    ``(k1 (t.dir1)^2 + k2 (t.dir2)^2) / 2`` of its fitted quadric) and stopping where the line
    leaves the surface (lateral offset from the nearest vertex over twice the mean edge, or past
    the outward side of a boundary vertex). The reach
    is the longest window of samples through the vertex whose range of distances is at most ``s``
    (the line may shift along the normal but is not tilted: conservative for lopsided windows).
    Marching runs on at most 2000 interior vertices chosen deterministically (the lowest-index
    candidate per cell of a plan grid); the others (boundary vertices included) take the reach of
    the nearest marched vertex and their own direction most parallel to its direction.
    Developable points march along their least-curved principal direction only (the ruling);
    flat points (both curvatures under the limit) also along the plan axes and diagonals.
    A line along an asymptotic direction that drifts off the surface quadratically, as
    ``alpha s^2``, is turned once by ``2 alpha / k_n'`` (one Newton step onto the asymptotic line,
    ``k_n' = (k2 - k1) sin 2t`` from Euler's formula) and marched again; the longer run is kept.
    Every reach is capped at the surface's extent (the diagonal of its bounding box).

Undercut (per vertex)
    The area-weighted normal looks away from the waste direction ``w`` (``n . w < -1e-9``; a
    vertical wall, ``n . w = 0``, is cut by a wire moving straight along it), or the ray from the
    vertex toward ``w`` meets the target again. That ray is parallel to ``w``, so it
    is cast exactly as a point-in-triangle test in plan view, with triangles bucketed on a grid:
    a triangle whose plan projection holds the vertex and whose height there exceeds the vertex's
    by more than ``1e-6`` of the extent occludes it. Every vertex is tested
    (:mod:`wirecut.geometry.occlusion`).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy.spatial import cKDTree

from wirecut.config import JobProfile, Policy
from wirecut.geometry.curvature import Curvature, vertex_curvature
from wirecut.geometry.frames import plan_basis, to_plan
from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.occlusion import FORK_FACES, is_height_field, plan_and_det, vertex_rays
from wirecut.geometry.vectors import cross
from wirecut.workers import background, threaded, worker_count

__all__ = [
    "SurfaceAnalysis",
    "analyse_surface",
    "allowed_sagitta",
    "sagitta_reach",
    "DEVELOPABLE",
    "RULED",
    "SYNCLASTIC",
    "MAX_MARCHED",
]

DEVELOPABLE, RULED, SYNCLASTIC = 0, 1, 2
#: At most this many vertices have their reach measured by marching.
MAX_MARCHED = 2000
_STEPS = 128  # samples per side of a marched line at most
_BATCH = 128  # marched lines per vectorized batch
_VERTICAL = 1e-9  # |n . w| below this is a vertical wall, not an undercut
_BACKGROUND_LINES = 500  # from this many marched lines, half are marched in a worker process
_BLOCK = 16  # samples per line marched before checking which lines go on


@dataclass(frozen=True, eq=False)
class SurfaceAnalysis:
    """Cuttability of a target surface, per vertex (part frame).

    Attributes
    ----------
    curvature : Curvature
        Curvature of the target.
    kind : (n,) int8
        0 developable, 1 ruled (K < 0), 2 synclastic (K > 0).
    wire_reach_mm : (n,) float, mm
        Longest straight wire through the vertex within tolerance under the policy.
    reach_direction : (n, 3) float, unit, part frame
        Tangent direction of that wire.
    undercut : (n,) bool
        The vertex cannot be reached by a wire coming from the waste side.
    vertex_area : (n,) float, mm^2
        Mixed Voronoi area (weights of every area fraction).
    marched : (n,) bool
        True where the reach was measured by marching (not filled from a neighbour or formula).
    tolerance_mm : float
        The job's surface tolerance, mm.
    policy : Policy
        The job's fitting policy.
    allowed_sagitta_mm : float
        Range of deviation a straight line may span: 2 tol (balanced) or tol (no-gouge), mm.
    length_mm : float
        Characteristic length L of the developable rule, mm.
    developable_limit_per_mm : float
        ``8 s / L^2``, 1/mm: the largest less-curved principal curvature counted developable.
    extent_mm : float
        Diagonal of the target's bounding box, mm (cap of the reach).
    target_area_mm2 : float
        Total area, mm^2.
    min_width_mm : float
        The job's ``pieces.min_width_mm`` (feasibility threshold of :meth:`summary_json`), mm.
    crease_length_mm : float
        Total length of the target's crease edges (:func:`wirecut.geometry.creases.sharp_edges`:
        folds, steps, ridges), mm; the pieces end at those along the sweep.
    """

    curvature: Curvature
    kind: np.ndarray
    wire_reach_mm: np.ndarray
    reach_direction: np.ndarray
    undercut: np.ndarray
    vertex_area: np.ndarray
    marched: np.ndarray
    tolerance_mm: float
    policy: Policy
    allowed_sagitta_mm: float
    length_mm: float
    developable_limit_per_mm: float
    extent_mm: float
    target_area_mm2: float
    min_width_mm: float
    crease_length_mm: float = 0.0

    def _fraction(self, mask: np.ndarray) -> float:
        total = float(self.vertex_area.sum())
        return float(self.vertex_area[mask].sum() / total) if total > 0 else 0.0

    def feasible_area_fraction(self, min_width_mm: float) -> float:
        """Share of the area (0..1) with reach >= ``min_width_mm`` and no undercut."""
        return self._fraction((self.wire_reach_mm >= min_width_mm) & ~self.undercut)

    def summary_json(self, min_width_mm: float | None = None) -> dict:
        """``{"feasible_area_fraction": ...}`` for ``check`` (default width: the job's)."""
        w = self.min_width_mm if min_width_mm is None else float(min_width_mm)
        return {"feasible_area_fraction": self.feasible_area_fraction(w)}

    def to_json(self) -> dict:
        """The ``analysis`` dict of plan.json (docs: /work/shared/interface.md).

        Percentiles are weighted by vertex area; the curvature ones use interior vertices only.
        Computed once (sorting a million reaches is not free); each call returns a copy.
        """
        return copy.deepcopy(self._json)

    @cached_property
    def _json(self) -> dict:
        cu = self.curvature
        inside = cu.interior
        k = cu.gaussian[inside]
        wk = self.vertex_area[inside]
        if k.size:
            p05, med, p95 = _weighted_percentile(k, wk, (5.0, 50.0, 95.0))
            gstats = {
                "min": float(k.min()),
                "p05": p05,
                "median": med,
                "p95": p95,
                "max": float(k.max()),
            }
        else:
            gstats = {key: None for key in ("min", "p05", "median", "p95", "max")}
        r, wr = self.wire_reach_mm, self.vertex_area
        r05, r50, r95 = _weighted_percentile(r, wr, (5.0, 50.0, 95.0))
        return {
            "target_area_mm2": float(self.target_area_mm2),
            "gaussian_curvature_per_mm2": gstats,
            "developable_area_fraction": self._fraction(self.kind == DEVELOPABLE),
            "ruled_area_fraction": self._fraction(self.kind == RULED),
            "synclastic_area_fraction": self._fraction(self.kind == SYNCLASTIC),
            "wire_reach_mm": {"p05": r05, "median": r50, "p95": r95},
            "undercut_area_fraction": self._fraction(self.undercut),
            # the vertices' scatter about smooth local fits (wirecut.geometry.roughness)
            "roughness_rms_mm": (
                float(cu.roughness.rms_mm)
                if cu.roughness is not None and np.isfinite(cu.roughness.rms_mm)
                else None
            ),
        }


def _weighted_percentile(values: np.ndarray, weights: np.ndarray, q):
    """Percentile ``q`` (0..100, a number or a sequence) of ``values`` with ``weights`` (lower
    step of the weighted CDF); a sequence of q gives a list, from one sort."""
    qs = np.atleast_1d(np.asarray(q, float))
    order = np.argsort(values, kind="stable")
    v, w = values[order], np.maximum(weights[order], 0.0)
    cdf = np.cumsum(w)
    if cdf[-1] <= 0:
        out = [float(np.percentile(values, qq)) for qq in qs]
    else:
        i = np.searchsorted(cdf, qs / 100.0 * cdf[-1], side="left")
        out = [float(v[min(int(ii), len(v) - 1)]) for ii in i]
    return out if np.ndim(q) else out[0]


def allowed_sagitta(tolerance_mm: float, policy: Policy) -> float:
    """Range of deviation (mm) a straight line may span: 2 tol (balanced) or tol (no-gouge)."""
    return (2.0 if Policy(policy) is Policy.BALANCED else 1.0) * float(tolerance_mm)


def sagitta_reach(curvature_per_mm: np.ndarray, tolerance_mm: float, policy: Policy) -> np.ndarray:
    """Longest chord (mm) of a circle of curvature ``|k|`` whose sagitta is the allowed error.

    ``w = 2 sqrt(R^2 - (R - s)^2) = 2 sqrt(2 R s - s^2)`` with ``R = 1/|k|`` and ``s`` from
    :func:`allowed_sagitta`; ``2R`` when ``s >= R``; infinite where ``k = 0``.
    """
    s = allowed_sagitta(tolerance_mm, policy)
    k = np.abs(np.asarray(curvature_per_mm, float))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(k > 0, 1.0 / k, np.inf)
        w = np.where(s < r, 2.0 * np.sqrt(np.maximum(2.0 * r * s - s * s, 0.0)), 2.0 * r)
    return w


def analyse_surface(target: TargetSurface, job: JobProfile) -> SurfaceAnalysis:
    """Classify the target, measure the wire reach and flag undercut vertices.

    Parameters
    ----------
    target : TargetSurface
    job : JobProfile
        Supplies the tolerance, the policy, the span and the piece rules.

    Returns
    -------
    SurfaceAnalysis
        See the module docstring for every rule.
    """
    # a height field over the plan has no occluded vertex (proven without a ray); otherwise
    # the rays do not need the curvature: a large mesh casts them in a worker process while
    # the curvature is fitted here
    plan_det = plan_and_det(target)
    occluded = None
    if not is_height_field(target, plan_det):
        occluded = background(
            lambda: vertex_rays(target, plan_det), min_size=FORK_FACES, size=len(target.faces)
        )
    # a KD-tree of the vertices (the wire reach's probe, the boundary's nearest interior
    # vertex) is built in a thread while the curvature is finished: after the fits' forks,
    # and joined here, before any other fork
    tree_job: dict = {}
    cu = vertex_curvature(
        target,
        after_fit=lambda: tree_job.setdefault("j", threaded(_tree_and_edge(target))),
    )
    tree = tree_job["j"].result() if tree_job else None
    tol, policy = job.tolerance.surface_mm, job.tolerance.policy
    s = allowed_sagitta(tol, policy)
    extent = target.extent_mm
    length = min(job.usable_width_mm, extent)
    limit = 8.0 * s / length**2

    k_big = np.maximum(np.abs(cu.k1), np.abs(cu.k2))
    k_prod = np.where(np.isfinite(cu.gaussian_patch), cu.gaussian_patch, cu.k1 * cu.k2)
    with np.errstate(divide="ignore", invalid="ignore"):
        k_min = np.where(k_big > 0, np.abs(k_prod) / k_big, 0.0)
    kind = np.where(k_prod < 0, RULED, SYNCLASTIC).astype(np.int8)
    kind[(k_min <= limit) | (k_big <= limit)] = DEVELOPABLE

    # the direction of least |normal curvature| (for a saddle: refined to an asymptotic line)
    least = np.where((np.abs(cu.k1) <= np.abs(cu.k2))[:, None], cu.dir1, cu.dir2)
    reach = np.minimum(sagitta_reach(np.minimum(np.abs(cu.k1), np.abs(cu.k2)), tol, policy), extent)
    direction = least.copy()
    marched = np.zeros(len(kind), bool)
    cand = np.flatnonzero(kind != SYNCLASTIC)
    if cand.size:
        # march from interior vertices (one-sided boundary fits give poorer directions)
        inner = cand[cu.interior[cand]]
        pick = _deterministic_subsample(target, inner if inner.size else cand, MAX_MARCHED)
        flat = k_big <= limit
        options = _direction_options(cu, least, target.up, flat)
        # a developable point marches along its ruling: asymptotic directions of a nearly
        # zero k1 k2 lean off the ruling by atan(sqrt(|k_small / k_big|))
        options[kind == DEVELOPABLE, :2] = np.nan
        step = extent / _STEPS
        probe = _SurfaceProbe(target, cu, tree)

        def march_from(lines: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            """Longest reach (k,) mm and its direction (k, 3) from vertices pick[lines]."""
            at = pick[lines]
            best_len = np.zeros(len(at))
            best_dir = np.zeros((len(at), 3))
            for o in range(options.shape[1]):
                dirs = options[at, o]
                ok = np.isfinite(dirs).all(axis=1)
                if o == 2:
                    ok &= ~np.isfinite(options[at, 0]).all(axis=1)
                lens = np.zeros(len(at))
                if ok.any():
                    lens[ok], alpha = _march(probe, at[ok], dirs[ok], step, extent, s)
                    if o < 2:
                        # one Newton step onto the asymptotic line: a line off it by eps lies
                        # alpha s^2 = -k_n'(t) eps s^2 / 2 from the surface, k_n'(t) =
                        # (k2 - k1) sin 2t (Euler's formula); turning it by -eps = 2 alpha / k_n'
                        # cancels that
                        turned = _turn_onto_asymptote(cu, at[ok], dirs[ok], alpha)
                        len2, _ = _march(probe, at[ok], turned, step, extent, s)
                        gain = len2 > lens[ok]
                        sel = np.flatnonzero(ok)[gain]
                        lens[sel] = len2[gain]
                        dirs = dirs.copy()
                        dirs[sel] = turned[gain]
                better = lens > best_len
                best_len[better] = lens[better]
                best_dir[better] = dirs[better]
            return best_len, best_dir

        # each line is marched on its own: the second half in a worker process meanwhile
        first, second = np.array_split(np.arange(len(pick)), 2)
        other = background(lambda: march_from(second), min_size=_BACKGROUND_LINES, size=len(pick))
        mine = march_from(first)
        theirs = other.result()
        best_len = np.concatenate([mine[0], theirs[0]])
        best_dir = np.concatenate([mine[1], theirs[1]])
        unset = best_len <= 0
        best_dir[unset] = least[pick[unset]]
        best_len = np.minimum(best_len, extent)
        # fill the other candidates from the nearest marched vertex
        # the cores are free again here: the query runs on each of them
        _, near = cKDTree(target.vertices[pick]).query(
            target.vertices[cand], workers=worker_count()
        )
        reach[cand] = best_len[near]
        ref = best_dir[near]
        opts = options[cand]
        dots = np.abs(
            opts[:, :, 0] * ref[:, None, 0]
            + opts[:, :, 1] * ref[:, None, 1]
            + opts[:, :, 2] * ref[:, None, 2]
        )
        dots[np.isnan(dots)] = 0.0  # an option that does not apply (NaN) scores nothing
        choice = np.argmax(dots, axis=1)
        direction[cand] = opts[np.arange(len(cand)), choice]
        direction[pick] = best_dir
        marched[pick] = True

    # boundary vertices have one-sided fits and no defect curvature: they take the class, the
    # reach and the direction of the nearest interior vertex
    edge_v = np.flatnonzero(~cu.interior)
    inner_v = np.flatnonzero(cu.interior)
    if edge_v.size and inner_v.size:
        src = _nearest_interior(target.vertices, cu.interior, edge_v, inner_v, tree)
        kind[edge_v] = kind[src]
        reach[edge_v] = reach[src]
        direction[edge_v] = direction[src]

    w = target.waste_normal
    undercut = target.vertex_normals @ w < -_VERTICAL
    if occluded is not None:
        undercut |= occluded.result()
    return SurfaceAnalysis(
        curvature=cu,
        kind=kind,
        wire_reach_mm=reach,
        reach_direction=direction,
        undercut=undercut,
        vertex_area=cu.vertex_area,
        marched=marched,
        tolerance_mm=float(tol),
        policy=policy,
        allowed_sagitta_mm=float(s),
        length_mm=float(length),
        developable_limit_per_mm=float(limit),
        extent_mm=float(extent),
        target_area_mm2=target.area_mm2,
        min_width_mm=float(job.pieces.min_width_mm),
        crease_length_mm=_crease_length(target),
    )


def _crease_length(target: TargetSurface) -> float:
    """Total length (mm) of the target's crease edges."""
    from wirecut.geometry.creases import crease_ends

    ends = crease_ends(target)
    if len(ends) == 0:
        return 0.0
    v = np.asarray(target.vertices, float)
    return float(np.linalg.norm(v[ends[:, 1]] - v[ends[:, 0]], axis=1).sum())


def _tree_and_edge(target: TargetSurface):
    """Work for a thread: a KD-tree of the target's vertices, and its mean edge (cached on the
    target); both are compiled loops that let the interpreter go."""

    def work() -> cKDTree:
        target.mean_edge_mm  # noqa: B018 - computed and cached here, read by the probe
        return cKDTree(target.vertices)

    return work


def _nearest_interior(
    vertices: np.ndarray,
    interior: np.ndarray,
    edge_v: np.ndarray,
    inner_v: np.ndarray,
    tree: cKDTree | None,
    k: int = 16,
) -> np.ndarray:
    """(len(edge_v),) int: the nearest interior vertex of each vertex ``edge_v``.

    With ``tree`` (a KD-tree of all the vertices, already built) the k nearest vertices are
    asked first and the first interior one taken: the nearest interior vertex whenever one is
    among them. Only the rest are asked of a tree of the interior vertices (built only then).
    """
    at = vertices[edge_v]
    src = np.full(len(edge_v), -1, np.int64)
    if tree is not None and tree.n == len(vertices):
        _, idx = tree.query(at, k=min(k, tree.n))
        idx = idx.reshape(len(edge_v), -1)
        inner = interior[idx]
        found = inner.any(axis=1)
        src[found] = idx[found, np.argmax(inner[found], axis=1)]
    rest = np.flatnonzero(src < 0)
    if rest.size:
        _, near = cKDTree(vertices[inner_v]).query(at[rest])
        src[rest] = inner_v[near]
    return src


def _turn_onto_asymptote(
    cu: Curvature, idx: np.ndarray, dirs: np.ndarray, alpha: np.ndarray
) -> np.ndarray:
    """Directions (k, 3) turned about the normal by ``2 alpha / k_n'``, cancelling the drift.

    The turn is clipped to 0.05 rad; the caller keeps it only where it lengthens the reach.
    """
    n = cu.normals[idx]
    c = np.einsum("ij,ij->i", dirs, cu.dir1[idx])
    si = np.einsum("ij,ij->i", dirs, cu.dir2[idx])
    slope = (cu.k2[idx] - cu.k1[idx]) * 2.0 * si * c  # d k_n / d t at the direction
    with np.errstate(divide="ignore", invalid="ignore"):
        eps = np.where(np.abs(slope) > 1e-12, 2.0 * alpha / slope, 0.0)
    eps = np.clip(eps, -0.05, 0.05)
    side = cross(n, dirs)
    out = np.cos(eps)[:, None] * dirs + np.sin(eps)[:, None] * side
    return out / np.linalg.norm(out, axis=1, keepdims=True)


def _direction_options(
    cu: Curvature, least: np.ndarray, up: np.ndarray, flat: np.ndarray
) -> np.ndarray:
    """(n, 7, 3) candidate wire directions per vertex, NaN where they do not apply.

    The two asymptotic directions, the least-curved principal direction, and at flat points
    (both principal curvatures under the developable limit, so every direction is a ruling) the
    plan axes e1, e2 and their two diagonals laid into the tangent plane, so that a flat region
    gets its longest chord among five directions and a consistent direction.
    """
    e1, e2, _ = plan_basis(up)
    extra = np.stack([e1, e2, e1 + e2, e1 - e2])  # (4, 3)
    out = np.full((len(least), 7, 3), np.nan)
    out[:, :2] = cu.asymptotic
    out[:, 2] = least
    at = np.flatnonzero(flat)  # only flat points take the plan directions
    n = cu.normals[at]
    t = extra[None, :, :] - np.einsum("kd,jd->kj", n, extra)[:, :, None] * n[:, None, :]
    norm = np.linalg.norm(t, axis=2, keepdims=True)
    out[at, 3:] = np.where(norm > 1e-6, t / np.where(norm > 0, norm, 1.0), np.nan)
    return out


def _deterministic_subsample(target: TargetSurface, cand: np.ndarray, limit: int) -> np.ndarray:
    """At most ``limit`` of ``cand``: the lowest index per cell of a plan grid of ~limit cells."""
    if len(cand) <= limit:
        return cand
    plan = to_plan(target.vertices[cand], target.up)
    lo, span = plan.min(axis=0), np.maximum(np.ptp(plan, axis=0), 1e-9)
    for cells in (limit, limit // 2, limit // 4, limit // 8):
        size = np.sqrt(span[0] * span[1] / cells)
        ij = np.floor((plan - lo) / size).astype(np.int64)
        key = ij[:, 0] * (int(ij[:, 1].max()) + 1) + ij[:, 1]
        _, first = np.unique(key, return_index=True)
        if len(first) <= limit:
            return np.sort(cand[first])
    return cand[np.linspace(0, len(cand) - 1, limit).astype(np.int64)]


class _SurfaceProbe:
    """Signed distance (mm) of points from the surface along the nearest vertex's normal."""

    def __init__(self, target: TargetSurface, cu: Curvature, tree: cKDTree | None = None) -> None:
        self.v = target.vertices
        self.tree = cKDTree(self.v) if tree is None else tree
        self.edge = target.mean_edge_mm
        self.off = 2.0 * self.edge
        self.reach = 3.0 * self.edge + 1e-9
        outward, shortest = _outward_boundary_directions(target)
        # how far past a boundary vertex a point still counts as on the surface: a twentieth
        # of the mean edge, or of three times the vertex's shortest boundary edge where that
        # is less (long slivers along a boundary, as CAD tessellations write them, would
        # otherwise let a line run most of a sliver's length past the end)
        self.past = 0.05 * np.minimum(self.edge, 3.0 * shortest)
        # per vertex: normal, dir1, dir2 (orthonormal) and the outward boundary tangent
        self.axes = np.stack([cu.normals, cu.dir1, cu.dir2, outward], axis=1)
        self.k = np.column_stack([cu.k1, cu.k2])

    def __call__(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Distances (k,) mm (+ toward the waste) and on-surface flags (k,) of points (k, 3)."""
        dist, j = self.tree.query(q, distance_upper_bound=self.reach)
        hit = np.isfinite(dist)
        j = np.where(hit, j, 0)
        loc = np.einsum("kij,kj->ki", self.axes[j], q - self.v[j])
        h, a, b, out = loc[:, 0], loc[:, 1], loc[:, 2], loc[:, 3]
        kk = self.k[j]
        surf = 0.5 * (kk[:, 0] * a * a + kk[:, 1] * b * b)
        # off the surface: too far sideways from the nearest vertex, or past the outward side
        # of a boundary vertex
        on = hit & (a * a + b * b <= self.off**2) & (out <= self.past[j])
        return h - surf, on


def _outward_boundary_directions(target: TargetSurface) -> tuple[np.ndarray, np.ndarray]:
    """(n, 3) unit tangent pointing out of the surface at boundary vertices, zero elsewhere;
    and (n,) the length of each vertex's shortest boundary edge, mm (infinite elsewhere)."""
    v, f = target.vertices, target.faces
    directed = np.stack([f, np.roll(f, -1, axis=1)], axis=2).reshape(-1, 2)
    third = np.roll(f, -2, axis=1).reshape(-1)
    lone = target.edge_table.lone()
    a, b, c = directed[lone, 0], directed[lone, 1], third[lone]
    e = v[b] - v[a]
    length = np.linalg.norm(e, axis=1, keepdims=True)
    e /= length
    shortest = np.full(len(v), np.inf)
    np.minimum.at(shortest, a, length[:, 0])
    np.minimum.at(shortest, b, length[:, 0])
    out = 0.5 * (v[a] + v[b]) - v[c]
    out -= np.einsum("ij,ij->i", out, e)[:, None] * e
    out /= np.maximum(np.linalg.norm(out, axis=1, keepdims=True), 1e-300)
    acc = np.zeros_like(v)
    for idx in (a, b):
        for d in range(3):
            acc[:, d] += np.bincount(idx, weights=out[:, d], minlength=len(v))
    norm = np.linalg.norm(acc, axis=1, keepdims=True)
    return np.divide(acc, norm, out=np.zeros_like(acc), where=norm > 0), shortest


def _march(
    probe: _SurfaceProbe,
    idx: np.ndarray,
    dirs: np.ndarray,
    step: float,
    max_len: float,
    allowed: float,
) -> tuple[np.ndarray, np.ndarray]:
    """Longest window (mm) through vertices ``idx`` along ``dirs``, deviation range <= allowed.

    Also returns the least-squares ``alpha`` (1/mm) of ``deviation = alpha s^2`` over the samples
    on the surface: the quadratic drift of a line that is slightly off an asymptotic direction.
    """
    k = int(min(_STEPS, np.ceil(max_len / step)))
    s = step * np.arange(k + 1)
    out = np.zeros(len(idx))
    alpha = np.zeros(len(idx))
    for b0 in range(0, len(idx), _BATCH):
        sl = slice(b0, min(len(idx), b0 + _BATCH))
        p0 = probe.v[idx[sl]]
        dd = dirs[sl]
        sides = []
        for sign in (1.0, -1.0):
            # march in blocks of samples; a line stops once it left the surface or its own
            # side already spans more than the allowed range
            dev = np.zeros((len(p0), k + 1))
            on = np.zeros((len(p0), k + 1), bool)
            active = np.arange(len(p0))
            for c0 in range(0, k + 1, _BLOCK):
                cols = np.arange(c0, min(k + 1, c0 + _BLOCK))
                q = p0[active, None, :] + sign * s[None, cols, None] * dd[active, None, :]
                d_blk, on_blk = probe(q.reshape(-1, 3))
                dev[np.ix_(active, cols)] = d_blk.reshape(len(active), len(cols))
                on[np.ix_(active, cols)] = on_blk.reshape(len(active), len(cols))
                if c0 == 0:
                    on[:, 0] = True
                seen = dev[active, : cols[-1] + 1] - dev[active, :1]
                live = on[active, : cols[-1] + 1].all(axis=1)
                live &= np.ptp(seen, axis=1) <= allowed
                active = active[live]
                if active.size == 0:
                    break
            dev = dev - dev[:, :1]
            # samples after the first one off the surface do not count
            alive = np.cumprod(on, axis=1).astype(bool)
            hi = np.maximum.accumulate(np.where(alive, dev, -np.inf), axis=1)
            lo = np.minimum.accumulate(np.where(alive, dev, np.inf), axis=1)
            sides.append((hi, lo, alive & (hi - lo <= allowed), np.where(alive, dev, 0.0)))
        (hp, lp, okp, dp), (hn, ln, okn, dn) = sides
        s2 = s * s
        num = (dp + dn) @ s2
        den = ((dp != 0) * 1.0 + (dn != 0) * 1.0) @ (s2 * s2)
        alpha[sl] = np.where(den > 0, num / np.where(den > 0, den, 1.0), 0.0)
        out[sl] = _longest_windows(hp, lp, okp, hn, ln, okn, allowed) * step
    return out, alpha


def _longest_windows(hp, lp, okp, hn, ln, okn, allowed: float) -> np.ndarray:
    """Longest window [-i, +j] (in steps, i + j) per line (r,) from the running extremes of
    both sides (r, k + 1): it holds when each side alone fits (``okp``, ``okn``) and the two
    fit together, ``max(hp_j, hn_i) - min(lp_j, ln_i) <= allowed``.

    Every condition is monotone in j (hp rises, lp falls; a NaN only ever ends a row), so the
    feasible j of a given i form a prefix, whose length is found by binary search in each
    line's sorted hp and -lp: O(k log k) per line instead of testing all k^2 pairs."""
    rows, width = hp.shape
    j_side = np.where(okp.all(axis=1), width, np.argmin(okp, axis=1))
    q_hi = ln + allowed  # hp_j <= ln_i + allowed
    q_lo = allowed - hn  # -lp_j <= allowed - hn_i
    neg_lp = -lp
    j_hi = np.empty((rows, width), np.int64)
    j_lo = np.empty((rows, width), np.int64)
    for r in range(rows):
        j_hi[r] = np.searchsorted(hp[r], q_hi[r], side="right")
        j_lo[r] = np.searchsorted(neg_lp[r], q_lo[r], side="right")
    j_hi[np.isnan(q_hi)] = 0  # a NaN bound admits nothing (searchsorted would admit all)
    j_lo[np.isnan(q_lo)] = 0
    count = np.minimum(np.minimum(j_hi, j_lo), j_side[:, None])
    count[~okn] = 0
    return np.where(count > 0, np.arange(width)[None, :] + count - 1, 0).max(axis=1)
