"""Choose the wire direction of a job: horizontal wires only.

Candidates are plan angles (the wire is perpendicular to ``mold.up``; a tilted wire is not
searched here, so a surface whose rulings climb steeply is scored only by the horizontal
directions nearest to them). They come from two sources:

- seeds from the surface analysis: area-weighted histograms (5 degree bins) of the plan angles
  of the per-vertex reach directions (weighted by area times reach), the asymptotic directions
  and the principal directions; the three strongest peaks of each;
- a uniform set, every 15 degrees.

Each candidate gets a quick score: the target is sampled once coarsely (about 6 000 samples,
rotated into each candidate's frame), cut into strips along the wire of the trial width
(``job.usable_width_mm`` capped at the target's extent along the wire), and a ruled cut is
fitted to each strip (:func:`wirecut.ruled.fit.fit_cut`, all three steps). The score is the
share of the target area within tolerance (feasible) and the largest deviation. The best
candidate has the largest feasible share (ties within half a percent), then the smallest max
deviation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from wirecut.config import JobProfile, MoldSide
from wirecut.errors import JobError
from wirecut.geometry.frames import DirectionFrame, rigid, to_plan
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.sampling import TargetSamples, sample_target

__all__ = ["DirectionChoice", "search_direction", "seed_angles", "UNIFORM_STEP_DEG"]

#: Spacing of the uniform candidate set, degrees.
UNIFORM_STEP_DEG = 15.0
_COARSE_SAMPLES = 6_000
_TIE = 0.005  # feasible shares closer than this count as equal
_RUNNER_UP_GAP_DEG = 10.0


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
    """Plan angles (rad, [0, pi)) of the strongest local maxima of a 5-degree histogram."""
    ok = np.isfinite(angles) & np.isfinite(weights) & (weights > 0)
    if not ok.any():
        return []
    bins = 36
    hist, _ = np.histogram(
        np.mod(angles[ok], np.pi), bins=bins, range=(0, np.pi), weights=weights[ok]
    )
    peak = (hist >= np.roll(hist, 1)) & (hist >= np.roll(hist, -1)) & (hist > 0)
    order = np.argsort(-hist * peak, kind="stable")[:count]
    return [float((i + 0.5) * np.pi / bins) for i in order if peak[i]]


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
    area = float(np.sum(target_face_areas(target)))
    spacing = max(math.sqrt(area / _COARSE_SAMPLES), 1.0)
    s = sample_target(target, rigid(frame.rotation, np.zeros(3)), spacing_mm=spacing)
    if len(s) > _COARSE_SAMPLES:
        idx = np.sort(np.random.default_rng(0).choice(len(s), _COARSE_SAMPLES, replace=False))
        sub = s.subset(idx)
        scale = s.area_mm2 / max(sub.area_mm2, 1e-300)
        s = TargetSamples(
            sub.points,
            sub.normals,
            sub.weights * scale,
            sub.undercut,
            sub.plan_xy,
            sub.face,
            sub.spacing_mm,
        )
    return s


def target_face_areas(target: Any) -> np.ndarray:
    """Face areas (m,) mm^2 of a TargetSurface-like object."""
    v = np.asarray(target.vertices, float)[np.asarray(target.faces)]
    return 0.5 * np.linalg.norm(np.cross(v[:, 1] - v[:, 0], v[:, 2] - v[:, 0]), axis=1)


def _score(samples: TargetSamples, job: JobProfile) -> tuple[float, float, int]:
    """(feasible area share, max |deviation| mm, strips) of strips along the wire."""
    z = samples.points[:, 2]
    z0, z1 = float(z.min()), float(z.max())
    span = max(z1 - z0, 1e-6)
    width = min(job.usable_width_mm, span)
    n = max(int(math.ceil(span / width - 1e-9)), 1)
    edges = np.linspace(z0, z1, n + 1)
    total = samples.area_mm2
    feasible, worst = 0.0, 0.0
    for i, (a, b) in enumerate(zip(edges[:-1], edges[1:], strict=True)):
        last = i == n - 1
        sel = (z >= a) & ((z <= b) if last else (z < b))  # each sample in one strip
        part = samples.subset(sel)
        if (~part.undercut).sum() < 12:
            continue
        try:
            fit = fit_cut(part, a, b, np.eye(4), job.tolerance, correspondence=False)
        except JobError:
            continue
        r = fit.report
        feasible += float(part.weights[r.within].sum())
        worst = max(worst, r.max_abs_mm)
    return min(feasible / total, 1.0) if total > 0 else 0.0, worst, n


def search_direction(
    target: Any, analysis: Any, job: JobProfile, candidates: Any = None
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
        Plan angles (rad) to score instead of the uniform 15-degree set (seeds still added).

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
    rows = []
    for angle, source in cands:
        frame = DirectionFrame.from_angle(angle, up, side)
        rel = rigid(frame.rotation @ first.rotation.T, np.zeros(3))
        feasible, worst, strips = _score(base.transformed(rel), job)
        rows.append(
            {
                "angle_deg": round(math.degrees(frame.angle_rad), 3),
                "feasible_area_fraction": feasible,
                "max_deviation_mm": worst,
                "strips": strips,
                "source": source,
                "_frame": frame,
            }
        )
    rows.sort(key=lambda r: (-round(r["feasible_area_fraction"] / _TIE), r["max_deviation_mm"]))
    best = rows[0]
    runner = None
    for r in rows[1:]:
        gap = abs((r["angle_deg"] - best["angle_deg"] + 90.0) % 180.0 - 90.0)
        if gap >= _RUNNER_UP_GAP_DEG:
            runner = r
            break
    if runner is None:
        reason = "no other candidate direction was scored"
    elif abs(runner["feasible_area_fraction"] - best["feasible_area_fraction"]) >= _TIE:
        reason = (
            f"the runner-up at {runner['angle_deg']:.0f} deg keeps "
            f"{runner['feasible_area_fraction'] * 100:.1f}% of the area within tolerance "
            f"against {best['feasible_area_fraction'] * 100:.1f}%"
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
