"""Choose the wire direction of a job: horizontal wires only.

Candidates are plan angles (the wire is perpendicular to ``mold.up``; a tilted wire is not
searched here, so a surface whose rulings climb steeply is scored only by the horizontal
directions nearest to them). They come from two sources:

- seeds from the surface analysis: area-weighted histograms (5 degree bins) of the plan angles
  of the per-vertex reach directions (weighted by area times reach), the asymptotic directions
  and the principal directions; the three strongest peaks of each, each refined to the
  weighted median of the angles around it and rounded to a quarter degree (a bin's centre
  is up to 2.5 degrees off the direction the surface shares);
- a uniform set, every 30 degrees.

Each candidate gets a quick score: the target is sampled once coarsely (about 2 500 samples:
lattice samples, or face centroids of an area-proportional random subset for a finely meshed
target; rotated into each candidate's frame), cut into strips along the wire of the trial width
(``job.usable_width_mm`` capped at the target's extent along the wire), and a ruled cut is
fitted to each strip (:func:`wirecut.ruled.fit.fit_cut`, steps 1-2 only: with step 3 every
direction within 45 degrees of the rulings would look alike). The score is the
share of the target area within tolerance where the towers can drive the wire (feasible: a
surface that climbs along the wire more steeply than ``MachineSpec.drivable_tilt`` asks one
tower higher than the other by more than the y travel, so it does not count however well it is
fitted; a hipped roof's face of 30 degrees, with the wire along its slope, scored 100 % and
none of its programs could be driven), the strips and the estimated pieces
(strips times the sweep splits the x travel forces), and the largest deviation. The trial
width is narrowed to what the curvature allows along that wire (:func:`predicted_width_mm`,
Euler's formula and the sagitta), so that a synclastic surface is scored at the width it will
really be cut at, not at the full span where no direction would pass. A direction whose
curvature allows strips narrower than ``pieces.min_width_mm`` ranks after every direction
that does not, whatever its feasible share: its trial strips are narrow, and a quick fit with
few samples across a narrow strip passes through them and looks feasible where it is not (a
tapered half-column, its generators along the wire, scored 94 % against 96 % for a wire 30
degrees off them, which needed strips of 87 mm and left 59 % of the area out of tolerance).
Among the rest, the best candidate has the largest feasible share (ties within half a
percent), then a mean climb along the wire within half of ``MachineSpec.drivable_tilt``
(steeper rulings, extended to the blank's faces, dip far below the surface: a coffer's
chamfer cut with the wire 30 degrees off level on a 1000 mm span passed 275 mm below the
bed), then the fewest estimated pieces, then the smallest max deviation in steps of a
tenth of the tolerance, then the least climb along the wire (the area-weighted mean slope
|dy/dz| of the surface along it, in steps of 0.1: level rulings are the easiest to drive,
and a plane's level lines are where a fabricator would lay the wire; a hipped roof's face
fits exactly in every direction within its drivable tilt, and the oblique one a difference
of a micron preferred dipped the wire below the bed), then the smallest max deviation.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from wirecut.config import JobProfile, MoldSide, ToleranceSpec
from wirecut.errors import JobError
from wirecut.geometry.creases import (
    PARALLEL_SKEW_MM,
    break_lines,
    crease_edges,
    crease_lines,
    nearest_gap,
    segments,
)
from wirecut.geometry.frames import DirectionFrame, rigid, to_plan
from wirecut.geometry.vectors import cross
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.sampling import TargetSamples, sample_target, undercut_flags
from wirecut.workers import pmap

__all__ = [
    "DirectionChoice",
    "search_direction",
    "seed_angles",
    "chord_reach_mm",
    "predicted_width_mm",
    "UNIFORM_STEP_DEG",
]

#: Spacing of the uniform candidate set, degrees.
UNIFORM_STEP_DEG = 30.0
_COARSE_SAMPLES = 2_500
_TIE = 0.005  # feasible shares closer than this count as equal
_RUNNER_UP_GAP_DEG = 10.0
_SEED_STEP_DEG = 0.25  # seeds from the analysis are rounded to this
_CLIMB_STEP = 0.1  # mean climbs closer than this (about 6 deg) count as equal
_STEEP_SHARE = 0.5  # a mean climb past this share of the drivable tilt ranks after the rest
_DEVIATION_STEP = 0.1  # quick-fit deviations closer than this share of the tolerance, alike


@dataclass(frozen=True)
class DirectionChoice:
    """The chosen wire direction and why.

    Attributes
    ----------
    best : DirectionFrame
        The wire direction to use.
    score : dict
        Score of ``best``: ``angle_deg``, ``feasible_area_fraction``, ``max_deviation_mm``,
        ``strips``, ``source``.
    runner_up : DirectionFrame or None
        The best candidate at least 10 degrees away from ``best``.
    reason : str
        One sentence on why the runner-up lost.
    table : tuple of dict
        Score of every candidate (same keys as ``score``), in ranking order.
    """

    best: DirectionFrame
    score: dict
    runner_up: DirectionFrame | None
    reason: str
    table: tuple = field(default_factory=tuple)


def _field(obj: Any, name: str) -> np.ndarray | None:
    for holder in (obj, getattr(obj, "curvature", None)):
        if holder is not None and getattr(holder, name, None) is not None:
            return np.asarray(getattr(holder, name), float)
    return None


def _peaks(angles: np.ndarray, weights: np.ndarray, count: int = 3) -> list[float]:
    """Plan angles (rad, [0, pi)) of the strongest local maxima of a 5-degree histogram, each
    refined to the weighted median of the angles within a bin and a half of its centre (a
    median rather than a mean: the few directions a noisy patch adds do not pull it off a
    direction most of the surface shares exactly). A bin's centre alone is up to 2.5 degrees
    off: a hyperbolic paraboloid's rulings at 135 degrees fall on a bin edge and were scored
    at 132.5. The result is rounded to ``_SEED_STEP_DEG``."""
    ok = np.isfinite(angles) & np.isfinite(weights) & (weights > 0)
    if not ok.any():
        return []
    bins = 36
    a = np.mod(angles[ok], np.pi)
    w = weights[ok]
    hist, _ = np.histogram(a, bins=bins, range=(0, np.pi), weights=w)
    peak = (hist >= np.roll(hist, 1)) & (hist >= np.roll(hist, -1)) & (hist > 0)
    order = np.argsort(-hist * peak, kind="stable")[:count]
    out = []
    width = np.pi / bins
    for i in order:
        if not peak[i]:
            continue
        centre = (i + 0.5) * width
        off = (a - centre + np.pi / 2) % np.pi - np.pi / 2  # axial: within (-90, 90] deg
        near = np.abs(off) <= 1.5 * width
        rank = np.argsort(off[near], kind="stable")
        cum = np.cumsum(w[near][rank])
        mid = off[near][rank][int(np.searchsorted(cum, 0.5 * cum[-1]))]
        # to a quarter degree: a median a hair off an axis of the part (90.03 deg, from the
        # few noisy directions of a wall's edges) widens the part's extent along the wire by
        # a fraction of a millimetre, which can take one more strip
        snap = math.radians(_SEED_STEP_DEG)
        out.append(float(np.mod(round((centre + mid) / snap) * snap, np.pi)))
    return out


def seed_angles(analysis: Any, up: np.ndarray) -> list[tuple[float, str]]:
    """Seed plan angles (rad) and their source from a SurfaceAnalysis (empty when None)."""
    if analysis is None:
        return []
    area = _field(analysis, "vertex_area")
    out: list[tuple[float, str]] = []
    sources = [
        ("reach_direction", "reach"),
        ("asymptotic", "asymptotic"),
        ("dir1", "principal"),
        ("dir2", "principal"),
    ]
    for name, label in sources:
        d = _field(analysis, name)
        if d is None:
            continue
        w = np.ones(len(d)) if area is None or len(area) != len(d) else area.copy()
        if name == "reach_direction":
            reach = _field(analysis, "wire_reach_mm")
            if reach is not None and len(reach) == len(d):
                w = w * np.nan_to_num(reach)
        if d.ndim == 3:  # (n, 2, 3): both asymptotic directions
            w = np.repeat(w, d.shape[1])
            d = d.reshape(-1, 3)
        plan = to_plan(np.nan_to_num(d, nan=0.0), up)
        valid = np.isfinite(d).all(axis=1) & (np.linalg.norm(plan, axis=1) > 0.5)
        ang = np.arctan2(plan[:, 1], plan[:, 0])
        out += [(a, label) for a in _peaks(ang[valid], w[valid])]
    return out


def _candidates(seeds: list[tuple[float, str]], extra: Any) -> list[tuple[float, str]]:
    cands = list(seeds)
    if extra is not None:
        cands += [(float(a), "given") for a in np.atleast_1d(extra)]
    else:
        step = math.radians(UNIFORM_STEP_DEG)
        cands += [(i * step, "uniform") for i in range(int(round(math.pi / step)))]
    kept: list[tuple[float, str]] = []
    for a, src in cands:
        a = float(np.mod(a, np.pi))
        near = [abs((a - b + np.pi / 2) % np.pi - np.pi / 2) < math.radians(2.0) for b, _ in kept]
        if not any(near):
            kept.append((a, src))
    return kept


def _coarse_samples(target: Any, frame: DirectionFrame) -> TargetSamples:
    """About ``_COARSE_SAMPLES`` samples for the quick score: lattice samples of the target at
    the spacing that gives that many, or, for a finely meshed target, the centroids of an
    area-proportional random subset of its faces (weights rescaled to the full area)."""
    areas = target_face_areas(target)
    area = float(areas.sum())
    transform = rigid(frame.rotation, np.zeros(3))
    if len(areas) <= _COARSE_SAMPLES:
        spacing = max(math.sqrt(area / _COARSE_SAMPLES), 1.0)
        return sample_target(target, transform, spacing_mm=spacing)
    rng = np.random.default_rng(0)
    pick = np.sort(rng.choice(len(areas), _COARSE_SAMPLES, replace=False, p=areas / area))
    verts = np.asarray(target.vertices, float)[np.asarray(target.faces)[pick]]
    cent = verts.mean(axis=1)
    normals = np.asarray(target.face_normals, float)[pick] @ frame.rotation.T
    return TargetSamples(
        points=cent @ frame.rotation.T,
        normals=normals,
        weights=np.full(len(pick), area / len(pick)),
        undercut=undercut_flags(target, cent, pick, normals),
        plan_xy=to_plan(cent, np.asarray(target.up, float)),
        face=pick,
        spacing_mm=math.sqrt(area / len(pick)),
    )


def target_face_areas(target: Any) -> np.ndarray:
    """Face areas (m,) mm^2 of a TargetSurface-like object."""
    v = np.asarray(target.vertices, float)[np.asarray(target.faces)]
    return 0.5 * np.linalg.norm(cross(v[:, 1] - v[:, 0], v[:, 2] - v[:, 0]), axis=1)


def chord_reach_mm(k_normal: np.ndarray, tolerance_mm: float, no_gouge: bool) -> np.ndarray:
    """Longest chord (mm) whose straight line stays within tolerance of a circular arc.

    Balanced: the best line to an arc of radius R = 1/|k| errs by half the sagitta (Chebyshev
    equioscillation), so w = 2 sqrt(R^2 - (R - 2 tol)^2); no-gouge: the whole sagitta counts,
    w = 2 sqrt(R^2 - (R - tol)^2). Infinite where k = 0.
    """
    k = np.abs(np.asarray(k_normal, float))
    e = tolerance_mm if no_gouge else 2.0 * tolerance_mm
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        r = 1.0 / k
        # R^2 - (R - e)^2 = 2 R e - e^2, written so: the difference of the squares cancels to
        # zero where R is huge (a plane's fit noise, k ~ 1e-16) and called a plane 0 mm wide
        w = np.where(r > e, 2.0 * np.sqrt(np.maximum(2.0 * r * e - e * e, 0.0)), 2.0 * r)
    return np.where(k > 0, w, np.inf)


def fit_tolerance(job: JobProfile) -> ToleranceSpec:
    """The tolerance a fit may use: all of it, or, when the wire lags (``wire.lag_ref_mm > 0``),
    the share ``1 - tolerance.lag_share`` left after the lag's (the split holds fits to it)."""
    t = job.tolerance
    if job.wire.lag_ref_mm > 0:
        return replace(t, surface_mm=t.surface_mm * t.fit_share)
    return t


def predicted_width_mm(
    analysis: Any, wire_part: np.ndarray, job: JobProfile, skip: np.ndarray | None = None
) -> float:
    """Strip width along ``wire_part`` (3,) the curvature allows, mm (inf if unknown).

    Normal curvature along the wire at every vertex by Euler's formula,
    k_n = k1 cos^2(a) + k2 sin^2(a) with a the angle between the wire (projected onto the
    tangent plane) and the first principal direction; the chord reach of each vertex from
    :func:`chord_reach_mm`; the strip must hold everywhere along the sweep, so the width is the
    area-weighted 2nd percentile of those reaches (a low percentile rather than the minimum,
    which one noisy vertex would set). ``skip`` (n,) bool leaves vertices out: those next to a
    break line, where strips end anyway and the quadric fits straddle the crease.
    """
    curv = getattr(analysis, "curvature", None)
    if curv is None:
        return math.inf
    k1, k2 = np.asarray(curv.k1, float), np.asarray(curv.k2, float)
    d1, d2 = np.asarray(curv.dir1, float), np.asarray(curv.dir2, float)
    area = np.asarray(curv.vertex_area, float)
    ok = np.isfinite(k1) & np.isfinite(k2) & np.all(np.isfinite(d1), axis=1) & (area > 0)
    if skip is not None and len(skip) == len(ok):
        ok &= ~skip
    if not ok.any():
        return math.inf
    c1 = d1[ok] @ wire_part
    c2 = d2[ok] @ wire_part
    norm = np.maximum(c1 * c1 + c2 * c2, 1e-12)
    kn = (k1[ok] * c1 * c1 + k2[ok] * c2 * c2) / norm
    no_gouge = job.tolerance.policy.value == "no-gouge"
    w = chord_reach_mm(kn, fit_tolerance(job).surface_mm, no_gouge)
    order = np.argsort(w)
    cum = np.cumsum(area[ok][order])
    i = int(np.searchsorted(cum, 0.02 * cum[-1]))
    return float(w[order][min(i, len(w) - 1)])


def _score(
    samples: TargetSamples,
    job: JobProfile,
    width_hint: float = math.inf,
    lines: np.ndarray | None = None,
    ridges: np.ndarray | None = None,
    creased: tuple[Any, np.ndarray] | None = None,
) -> tuple[float, float, int, int, float]:
    """(feasible area share, max |deviation| mm, strips, estimated pieces, climb) of strips
    along the wire, at the trial width: the usable span, narrowed to ``width_hint`` (the width the
    curvature allows) but never below ``pieces.min_width_mm``. With break ``lines`` (wire
    coordinates, mm: :func:`wirecut.geometry.creases.break_lines`) the strips are laid out
    between them, as the split will, and the samples on a line (a step's wall, the crease
    itself) are left out. ``ridges`` (machine x, mm) are the creases along the wire, where
    the fits put a knot as the split's do (``knots_at`` of :func:`fit_cut`). ``creased`` is
    (target, the frame's rotation): each trial strip's oblique creases along the wire are then
    followed by skewed rulings, as the split's fits do (``crease_lines`` of :func:`fit_cut`).
    Only samples where the surface climbs along the wire no more steeply than the towers can
    tilt a ruling (``MachineSpec.drivable_tilt``) count as feasible. The climb is the
    area-weighted mean of that slope |dy/dz| (each sample's capped at 1)."""
    z = samples.points[:, 2]
    z0, z1 = float(z.min()), float(z.max())
    span = max(z1 - z0, 1e-6)
    width = min(job.usable_width_mm, span, max(width_hint, job.pieces.min_width_mm))
    spans = [(z0, z1)]
    if lines is not None and len(lines):
        spans = segments(z0, z1, lines, job.pieces.min_width_mm)
        eps = 1e-6 * (1.0 + max(abs(z0), abs(z1)))
        off = nearest_gap(z, np.asarray(lines, float)) > eps
        samples, z = samples.subset(off), z[off]
    edges = [spans[0][0]]
    for a, b in spans:
        k = max(int(math.ceil((b - a) / width - 1e-9)), 1)
        edges.extend(np.linspace(a, b, k + 1)[1:])
    n = len(edges) - 1
    total = samples.area_mm2
    feasible, worst = 0.0, 0.0
    m = job.machine
    # where the surface climbs along the wire more steeply than the towers can tilt a ruling
    # (MachineSpec.drivable_tilt), no program can follow it: not feasible, however well fitted
    ny, nz = np.abs(samples.normals[:, 1]), np.abs(samples.normals[:, 2])
    drivable = nz <= m.drivable_tilt() * ny
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(ny > 0, np.minimum(nz / ny, 1.0), 1.0)
    climb = float(np.average(slope, weights=samples.weights)) if len(slope) else 0.0
    sweep_max = m.travel_x_mm[1] - m.travel_x_mm[0] - 2.0 * m.home_clearance_mm
    for i, (a, b) in enumerate(zip(edges[:-1], edges[1:], strict=True)):
        last = i == n - 1
        sel = (z >= a) & ((z <= b) if last else (z < b))  # each sample in one strip
        part = samples.subset(sel)
        steady = drivable[sel]
        if (~part.undercut).sum() < 12:
            continue
        oblique = None
        if creased is not None:
            x = part.points[:, 0]
            reach = float(x.max() - x.min())
            # as long along the sweep as the strip's pieces, as estimated below
            steep = m.drivable_slope(reach / max(math.ceil(reach / max(sweep_max, 1.0)), 1))
            x_mid, skew = crease_lines(
                creased[0], rigid(creased[1], np.zeros(3)), a, b, max_slope=steep
            )
            keep = np.abs(skew) > PARALLEL_SKEW_MM
            oblique = (x_mid[keep], skew[keep]) if keep.any() else None
        try:
            fit = fit_cut(
                part, a, b, np.eye(4), fit_tolerance(job), correspondence=False,
                knots_at=ridges, crease_lines=oblique,
            )  # fmt: skip
        except JobError:
            continue
        r = fit.report
        feasible += float(part.weights[r.within & steady].sum())
        worst = max(worst, r.max_abs_mm)
    x = samples.points[:, 0]
    along = max(int(math.ceil((float(x.max()) - float(x.min())) / max(sweep_max, 1.0))), 1)
    share = min(feasible / total, 1.0) if total > 0 else 0.0
    return share, worst, n, n * along, climb


def search_direction(
    target: Any,
    analysis: Any,
    job: JobProfile,
    candidates: Any = None,
    meanwhile: Callable[[], None] | None = None,
) -> DirectionChoice:
    """Pick the horizontal wire direction with the most area within tolerance.

    Parameters
    ----------
    target : TargetSurface
        The target, part frame (mm).
    analysis : SurfaceAnalysis or None
        Seeds the candidates with its reach, asymptotic and principal directions.
    job : JobProfile
        Tolerance, policy, machine span, mold up and side.
    candidates : array of float, optional
        Plan angles (rad) to score instead of the uniform 30-degree set (seeds still added).
    meanwhile : callable () -> None, optional
        Work for this process while worker processes score the candidates
        (:func:`wirecut.workers.pmap`).

    Returns
    -------
    DirectionChoice
    """
    up = np.asarray(job.mold.up, float)
    side = MoldSide(job.mold.side)
    cands = _candidates(seed_angles(analysis, up), candidates)
    if not cands:
        raise JobError("no wire direction candidates to score")
    first = DirectionFrame.from_angle(cands[0][0], up, side)
    base = _coarse_samples(target, first)
    creased = len(crease_edges(target)[0]) > 0  # once, before the workers are forked
    plan = to_plan(np.asarray(target.vertices, float), up) if creased else None
    near = 3.0 * float(getattr(target, "mean_edge_mm", 0.0)) if creased else 0.0

    def scored(angle: float):
        frame = DirectionFrame.from_angle(angle, up, side)
        rel = rigid(frame.rotation @ first.rotation.T, np.zeros(3))
        lines = skip = ridges = None
        if creased:
            least = 0.25 * job.pieces.min_width_mm
            wire = to_plan(frame.wire_part[None, :], up)[0]
            lines = break_lines(target, wire, least)
            if len(lines):
                skip = nearest_gap(plan @ (wire / np.linalg.norm(wire)), lines) <= near
            # the creases along the wire, at machine x (the samples' frame has no shift)
            ridges = break_lines(target, to_plan(frame.rotation[0][None, :], up)[0], least)
        hint = predicted_width_mm(analysis, frame.wire_part, job, skip)
        creases = (target, frame.rotation) if creased else None
        return frame, hint, _score(base.transformed(rel), job, hint, lines, ridges, creases)

    rows = []
    results = pmap(scored, [angle for angle, _ in cands], meanwhile=meanwhile)
    for (_, source), (frame, hint, score) in zip(cands, results, strict=True):
        feasible, worst, strips, pieces, climb = score
        rows.append(
            {
                "angle_deg": round(math.degrees(frame.angle_rad), 3),
                "feasible_area_fraction": feasible,
                "max_deviation_mm": worst,
                "strips": strips,
                "estimated_pieces": pieces,
                "climb": round(climb, 4),
                "trial_width_mm": round(min(hint, job.usable_width_mm), 1),
                # the curvature allows less than the narrowest piece: the coarse fits, with few
                # samples per narrow strip, cannot be trusted to say otherwise
                "below_min_width": bool(hint < job.pieces.min_width_mm),
                "source": source,
                "_frame": frame,
            }
        )
    # deviations closer than a tenth of the tolerance are alike: the climb decides there
    dev_step = _DEVIATION_STEP * job.tolerance.surface_mm

    def dev_bin(r: dict) -> int:
        return round(r["max_deviation_mm"] / dev_step)

    def climb_bin(r: dict) -> int:
        return round(r["climb"] / _CLIMB_STEP)

    # a climb past half the drivable tilt dips the extended rulings far below the surface at
    # the blank's faces (a coffer's chamfer on a 1000 mm span, its wire 30 deg off level, a
    # climb of 0.5: 275 mm below the bed), more than the base and a riser make up
    steep = _STEEP_SHARE * job.machine.drivable_tilt()
    for r in rows:
        r["steep"] = bool(r["climb"] > steep)
    rows.sort(
        key=lambda r: (
            r["below_min_width"],
            -round(r["feasible_area_fraction"] / _TIE),
            r["steep"],
            r["estimated_pieces"],
            dev_bin(r),
            climb_bin(r),
            r["max_deviation_mm"],
        )
    )
    best = rows[0]
    runner = None
    for r in rows[1:]:
        gap = abs((r["angle_deg"] - best["angle_deg"] + 90.0) % 180.0 - 90.0)
        if gap >= _RUNNER_UP_GAP_DEG:
            runner = r
            break
    if runner is None:
        reason = "no other candidate direction was scored"
    elif runner["below_min_width"] and not best["below_min_width"]:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg bends too much along its wire for "
            f"strips of the minimum width {job.pieces.min_width_mm:g} mm (its curvature allows "
            f"about {runner['trial_width_mm']:.0f} mm), where the quick fits cannot be trusted"
        )
    elif abs(runner["feasible_area_fraction"] - best["feasible_area_fraction"]) >= _TIE:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps "
            f"{runner['feasible_area_fraction'] * 100:.1f}% of the area within tolerance "
            f"against {best['feasible_area_fraction'] * 100:.1f}%"
        )
    elif runner["steep"] and not best["steep"]:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps as much area within "
            f"tolerance but the surface climbs along its wire by {runner['climb']:.2f} on "
            f"average, more than half of what the towers can tilt a ruling to "
            f"({job.machine.drivable_tilt():.2f}), against {best['climb']:.2f}"
        )
    elif runner["estimated_pieces"] != best["estimated_pieces"]:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps as much area within "
            f"tolerance but needs about {runner['estimated_pieces']} pieces against "
            f"{best['estimated_pieces']}"
        )
    elif dev_bin(runner) == dev_bin(best) and climb_bin(runner) != climb_bin(best):
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps as much area within "
            f"tolerance in as many pieces, but the surface climbs along its wire by "
            f"{runner['climb']:.2f} on average against {best['climb']:.2f}: its rulings tilt "
            "further"
        )
    else:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps as much area within "
            f"tolerance but deviates up to {runner['max_deviation_mm']:.3f} mm against "
            f"{best['max_deviation_mm']:.3f} mm"
        )

    def public(r: dict) -> dict:
        return {k: v for k, v in r.items() if not k.startswith("_")}

    return DirectionChoice(
        best=best["_frame"],
        score=public(best),
        runner_up=None if runner is None else runner["_frame"],
        reason=reason,
        table=tuple(public(r) for r in rows),
    )
