"""Splitting the mold into pieces: strips across the wire, splits along the sweep, blocks.

The wire direction fixed, a piece is a strip of the footprint between two planes perpendicular
to the wire (its two block end faces), possibly split along the sweep when it is longer than
the stock or the machine travel allow. Every strip must be cuttable within tolerance by one
ruled cut.

Fewest strips. Let ``F(a, b)`` say whether the strip between wire coordinates ``a < b`` can be
cut within tolerance. F is monotone: a strip inside a feasible strip is feasible (the same cut
restricted to it fits at least as well). For monotone F the greedy sweep that starts at the
footprint's edge and takes, each time, the widest feasible strip gives the fewest strips: by
induction its k-th cut lies at least as far as the k-th cut of any feasible cover ("greedy
stays ahead", the exchange argument of interval scheduling, J. Kleinberg and E. Tardos,
*Algorithm Design*, 2006, ch. 4.1). The widest strip is found by bisection on a grid of step
``resolution_mm`` from the strip start, so the result is optimal among covers whose cuts lie on
that grid (``tests/pieces/test_split_greedy.py`` checks this against exhaustive search).

Where even a strip of ``pieces.min_width_mm`` fails tolerance, a min-width strip is kept,
marked infeasible, and its area reported as an attention finding.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
import shapely
from shapely.geometry import Polygon

from wirecut.config import JobProfile
from wirecut.errors import JobError
from wirecut.findings import Finding, Severity
from wirecut.geometry.creases import PARALLEL_SKEW_MM, break_lines, crease_lines, segments
from wirecut.geometry.frames import DirectionFrame, rigid
from wirecut.geometry.per_target import PerTarget
from wirecut.geometry.plan_shapes import triangle_polygons
from wirecut.pieces.layout import (
    fragment_finding,
    fragments,
    parts_between,
    placed_sweep_cuts,
    sweep_cuts,
)
from wirecut.pieces.piece import Block, Piece
from wirecut.pieces.region import (
    extent_along,
    faces_near_boundary,
    footprint,
    kept_volume_mm3,
    plan_axes,
    polygons_of,
    strip,
)
from wirecut.workers import forked, pmap

__all__ = [
    "StripPlan",
    "DirectionRow",
    "SplitResult",
    "Judge",
    "greedy_strips",
    "sweep_cuts",
    "strip_count_bound",
    "split_limits",
    "lead_room_mm",
    "sweep_limit",
    "split_pieces",
    "COARSE_ACCEPT",
    "fit_budget",
    "prepare_split",
    "tower_overrun_mm",
]

#: During the bisection a strip passes when its coarse fit stays within this share of the
#: tolerance: the coarse lattice may miss up to 5 % of the tolerance of the true maximum (the
#: spacing is chosen for that, see ``_coarse_spacing``). When the wire lags, the share
#: ``tolerance.lag_share`` is kept for the lag too (see :func:`fit_budget`).
COARSE_ACCEPT = 0.95

#: Faces tested exactly per round when a block's top is looked for (highest first).
_TOP_BATCH = 256


def fit_budget(job: JobProfile) -> float:
    """Share of the tolerance a strip's coarse fit may use: ``COARSE_ACCEPT``, less the lag's
    share (``tolerance.lag_share``) when the wire has a lag (``wire.lag_ref_mm > 0``)."""
    lag = job.tolerance.lag_share if job.wire.lag_ref_mm > 0 else 0.0
    return COARSE_ACCEPT - lag


@dataclass(frozen=True)
class StripPlan:
    """Cut positions across the wire.

    Attributes
    ----------
    cuts : (n + 1,) float, mm, plan coordinate along the wire
        Strip k lies between ``cuts[k]`` and ``cuts[k + 1]``; ``cuts[0]`` is the footprint's
        start. The last strip may end beyond the footprint when it had to be widened to the
        minimum width.
    feasible : (n,) bool
        False for a strip where even the minimum width failed tolerance.
    evaluations : int
        How many times the feasibility oracle was asked.
    """

    cuts: np.ndarray
    feasible: np.ndarray
    evaluations: int

    @property
    def count(self) -> int:
        """Number of strips."""
        return len(self.feasible)

    @staticmethod
    def joined(parts: Sequence[StripPlan]) -> StripPlan:
        """The plans of consecutive segments (each starting where the one before ends) as one."""
        cuts = [parts[0].cuts[:1]] + [p.cuts[1:] for p in parts]
        return StripPlan(
            np.concatenate(cuts),
            np.concatenate([p.feasible for p in parts]),
            sum(p.evaluations for p in parts),
        )


def greedy_strips(
    lo: float,
    hi: float,
    feasible: Callable[[float, float], bool | float],
    max_width_mm: float,
    min_width_mm: float,
    resolution_mm: float,
    progress: Callable[[str], None] | None = None,
    guess_mm: float | None = None,
    feasible_many: Callable[[list[tuple[float, float]]], list] | None = None,
    end_is_cut: bool = False,
) -> StripPlan:
    """Fewest strips covering ``[lo, hi]`` whose every strip passes ``feasible``.

    Parameters
    ----------
    lo, hi : float, mm
        Extent of the footprint along the wire.
    feasible : callable (a, b) -> bool or float
        The oracle: can the strip between a and b (mm) be cut within tolerance. Must be
        monotone (true for a strip implies true for every sub-strip) for the count to be the
        fewest. It may instead return a float, the strip's error over the allowed error
        (feasible when <= 1): the search then aims its next width at where that ratio
        reaches 1, assuming it grows as a power of the width (see ``_aim``).
    max_width_mm, min_width_mm : float, mm
        Widest and narrowest strip the machine and the stock allow.
    resolution_mm : float, mm
        Grid step of the bisection; cuts lie at ``a + k * resolution_mm`` from each strip's
        start (the last one is clamped to ``hi``).
    progress : callable (str) -> None, optional
        Told about each strip found.
    guess_mm : float, optional
        Expected strip width where the search starts (later strips start from the previous
        width); it changes only how many times the oracle is asked, never the result.
    feasible_many : callable (list of (a, b)) -> list, optional
        The same oracle asked about several strips at once (for instance side by side in
        worker processes); the search then asks two strips per round. Never changes the
        result.
    end_is_cut : bool
        ``hi`` is a cut the last strip must end at (a break line, see
        :mod:`wirecut.geometry.creases`), not the footprint's edge: a rest narrower than the
        minimum width is then made up by moving the cut before it back (the strip before
        stays feasible, being narrower), instead of widening the last strip beyond ``hi``.
        At the footprint's edge the last strip is widened, except past a rest narrower than
        one grid step (a sliver), which moves the cut back too.

    Returns
    -------
    StripPlan
    """
    if not (max_width_mm >= min_width_mm > 0 and resolution_mm > 0):
        raise ValueError("greedy_strips needs max_width >= min_width > 0 and resolution > 0")
    step = float(resolution_mm)
    k_min = max(1, int(math.ceil(min_width_mm / step - 1e-9)))
    k_max = max(k_min, int(math.floor(max_width_mm / step + 1e-9)))
    cuts = [float(lo)]
    ok: list[bool] = []
    calls = 0

    def answer(raw) -> tuple[bool, float | None]:
        if isinstance(raw, (bool, np.bool_)):
            return bool(raw), None
        ratio = float(raw)
        return bool(ratio <= 1.0), ratio if math.isfinite(ratio) and ratio > 0 else None

    def ask_all(pairs: list[tuple[float, float]]) -> list[tuple[bool, float | None]]:
        nonlocal calls
        calls += len(pairs)
        if feasible_many is not None and len(pairs) > 1:
            return [answer(r) for r in feasible_many(pairs)]
        return [answer(feasible(x, y)) for x, y in pairs]

    def ask(a: float, b: float) -> tuple[bool, float | None]:
        return ask_all([(a, b)])[0]

    def largest(a: float, lo_k: int, hi_k: int, guess: int) -> int:
        """Largest k in [lo_k, hi_k] with a feasible strip of k steps (lo_k - 1 if none).

        Every probe lies strictly inside the bracket (good, bad), so for a monotone oracle
        the answer is that of plain bisection whatever the probes. They are aimed where the
        oracle's ratio predicts the edge (``_aim``) while that keeps working, else
        galloping from the guess (doubling steps) and then bisection. With
        ``feasible_many``, each round asks a companion probe too (the next width after an
        aimed or first one, thirds instead of halves), answered side by side.
        """
        good, bad = lo_k - 1, hi_k + 1
        ratios: dict[int, float] = {}
        probe = min(max(guess, lo_k), hi_k)
        companion = probe + 1
        stride, aimed = 1, 0
        while bad - good > 1:
            ks = [probe]
            if feasible_many is not None and good + 1 <= companion <= bad - 1:
                ks = sorted({probe, companion})
            for k, (passed, ratio) in zip(
                ks, ask_all([(a, a + k * step) for k in ks]), strict=True
            ):
                if passed:
                    good = max(good, k)
                else:
                    bad = min(bad, k)
                if ratio is not None:
                    ratios[k] = ratio
            good = min(good, bad - 1)  # a non-monotone answer: trust the failing width
            if bad - good <= 1:
                break
            nxt = _aim(ratios, good, bad) if aimed < 4 else None
            if nxt is not None:
                aimed += 1
                companion = nxt + 1
            elif bad > hi_k:  # no failing width known yet: gallop upward
                nxt, stride = good + stride, 2 * stride
                companion = good + stride
            elif good < lo_k:  # no passing width known yet: gallop downward
                nxt, stride = bad - stride, 2 * stride
                companion = bad - stride
            else:
                nxt = (good + bad) // 2
                third = max((bad - good) // 3, 1)
                nxt, companion = good + third, bad - third
            probe = min(max(nxt, good + 1), bad - 1)
        return good

    guess = min(2 * k_min, k_max)  # narrow strips are the cheap ones to fit
    if guess_mm is not None and guess_mm > 0:
        guess = int(round(guess_mm / step))
    a = float(lo)
    while hi - a > 1e-9:
        rest = hi - a
        back = hi - min_width_mm
        if (
            # at a break line; or a sliver narrower than a grid step past the last cut (an
            # extent a hair over a whole number of strips), which would make a blank of the
            # minimum width around a ribbon of surface
            (end_is_cut or rest < step - 1e-9)
            and rest < min_width_mm - 1e-9
            and len(cuts) >= 2
            and back - cuts[-2] >= min_width_mm - 1e-9
        ):
            cuts[-1] = back
            cuts.append(float(hi))
            ok.append(ask(back, hi)[0])
            break
        if end_is_cut and rest < min_width_mm - 1e-9 and len(cuts) >= 2:
            # the strip before cannot give up the room (it is at the minimum width, a strip
            # that failed there): the rest joins it, so that no strip is narrower than the
            # minimum or crosses the break line
            cuts[-1] = float(hi)
            ok[-1] = ask(cuts[-2], hi)[0]
            break
        whole = rest <= k_max * step + 1e-9
        top = min(k_max, int(math.ceil(rest / step - 1e-9)) - 1)
        if whole and (top < k_min or rest <= guess * step + 1e-9) and ask(a, hi)[0]:
            # the rest fits in one strip (widened to the minimum width if narrower)
            cuts.append(max(hi, a + k_min * step) if rest < min_width_mm else hi)
            ok.append(True)
            break
        good = largest(a, k_min, top, guess) if top >= k_min else k_min - 1
        if good == top and whole and rest > guess * step + 1e-9 and ask(a, hi)[0]:
            cuts.append(hi)
            ok.append(True)
            break
        if good < k_min:
            b = a + k_min * step
            if end_is_cut:
                b = min(b, float(hi))  # a strip ends at the break line, never past it
            cuts.append(b)
            ok.append(False)
            if progress is not None:
                progress(f"strip {len(ok)}: {a:.1f}..{b:.1f} mm fails tolerance at min width")
            a = b
            continue
        b = a + good * step
        cuts.append(b)
        ok.append(True)
        guess = good
        if progress is not None:
            progress(f"strip {len(ok)}: {a:.1f}..{b:.1f} mm")
        a = b
    return StripPlan(np.asarray(cuts, float), np.asarray(ok, bool), calls)


def _aim(ratios: dict[int, float], good: int, bad: int) -> int | None:
    """Width (grid steps) where the oracle's ratio is predicted to reach 1, or None.

    The ratio is modelled as ``c k^p``: a strip's deviation grows as its width squared where
    the surface bends or twists across the wire (the sagitta ``w^2 / 8R``), so ``p = 2`` from
    one known ratio; from the two known ratios nearest the bracket's ends, p is fitted
    through both (clipped to 0.5..4). The prediction is rounded down, and moved one step
    past a known passing width so that each probe narrows the bracket."""
    pts = ratios  # passing probes lie at or below good, failing ones at or above bad
    lower = [k for k in pts if pts[k] <= 1.0]
    upper = [k for k in pts if pts[k] > 1.0]
    if not lower and not upper:
        return None
    p = 2.0
    if lower and upper:
        kg, kb = max(lower), min(upper)
        if kb != kg and pts[kb] > pts[kg]:
            p = float(np.clip(math.log(pts[kb] / pts[kg]) / math.log(kb / kg), 0.5, 4.0))
    ref = max(lower) if lower else min(upper)
    if lower and upper and abs(math.log(pts[min(upper)])) < abs(math.log(pts[ref])):
        ref = min(upper)
    k_star = int(math.floor(ref * pts[ref] ** (-1.0 / p) + 1e-9))
    return max(k_star, good + 1) if k_star <= good else k_star


def strip_count_bound(
    extent_mm: float, reach_mm: Sequence[float] | np.ndarray | None, max_width_mm: float
) -> int:
    """Lower bound on the strip count: extent across the wire over the p95 wire reach.

    The reach of a strip cannot exceed the wire reach of most of its points, and never the
    widest block; the 95th percentile (not the median) keeps the bound a bound when a few
    regions are easier than the rest. NaN reaches are ignored.
    """
    w = float(max_width_mm)
    if reach_mm is not None:
        r = np.asarray(reach_mm, float)
        r = r[np.isfinite(r) & (r > 0)]
        if r.size:
            w = min(w, float(np.percentile(r, 95)))
    return max(1, int(math.ceil(extent_mm / w - 1e-9)))


# --------------------------------------------------------------------------- the pieces


@dataclass(frozen=True)
class DirectionRow:
    """One candidate wire direction as split.

    Attributes
    ----------
    angle_deg : float
        Plan angle of the wire, degrees from e1 toward e2.
    strips, pieces : int
        Strips across the wire, and pieces after the splits along the sweep.
    lower_bound : int
        :func:`strip_count_bound` for this direction.
    max_deviation_mm : float
        Largest final-fit deviation over its pieces, mm (NaN when not refitted).
    chosen : bool
        True for the direction kept.
    """

    angle_deg: float
    strips: int
    pieces: int
    lower_bound: int
    max_deviation_mm: float
    chosen: bool


@dataclass(frozen=True)
class SplitResult:
    """The mold split into pieces for the kept wire direction.

    Attributes
    ----------
    pieces : tuple of Piece
        In order across the wire, then along the sweep. ``piece.extra`` holds ``strip_mm``
        (wire plan coordinates of its two faces), ``feasible`` (False when even the minimum
        width failed tolerance), ``kept_volume_mm3`` (foam under its surface down to the
        base plane) and ``holes_plan`` (list of (k, 2) mm outlines of holes, part plan).
    findings : tuple of Finding
    infeasible_area_mm2 : float
        Plan area of the strips that fail tolerance at the minimum width, mm^2.
    lower_bound : int
        Lower bound on the strip count of the kept direction (:func:`strip_count_bound`).
    directions : tuple of DirectionRow
        Every candidate direction tried.
    footprint_area_mm2 : float
        Plan area of the target's footprint, mm^2.
    cuts_mm : (n + 1,) float, mm
        Strip cut positions along the wire (plan coordinate ``p . wire``) of the kept direction.
    fragment_areas_mm2 : tuple of float
        Plan areas of the outline's fragments left out of every piece (:func:`_fragments`).
    """

    pieces: tuple[Piece, ...]
    findings: tuple[Finding, ...]
    infeasible_area_mm2: float
    lower_bound: int
    directions: tuple[DirectionRow, ...]
    footprint_area_mm2: float
    cuts_mm: np.ndarray
    fragment_areas_mm2: tuple[float, ...] = ()


def split_limits(job: JobProfile) -> tuple[float, float]:
    """(widest strip along the wire, longest blank along the sweep), mm.

    Along the wire: the usable span (span - 2 face_to_tower) and the longest horizontal side
    (length or width) of any stock kind. Along the sweep: the x travel less the room the
    program needs beyond each end of the blank (:func:`lead_room_mm`), and the same longest
    horizontal stock side. Blanks stand upright here; the allocation may still lay one on its
    side.
    """
    m = job.machine
    side = max(max(s.size_mm[0], s.size_mm[1]) for s in job.stock)
    max_w = min(job.usable_width_mm, side)
    travel = m.travel_x_mm[1] - m.travel_x_mm[0] - 2.0 * lead_room_mm(job, max_w)
    return float(max_w), float(min(travel, side))


def lead_room_mm(job: JobProfile, width_mm: float) -> float:
    """Room (mm) a program needs along the sweep beyond each end of a blank ``width_mm``
    wide along the wire, placed midway between the towers as the split places it.

    The wire enters a home clearance before the block and leaves it by the clearance plus
    its lag at the cut speed (the exit overshoot, :mod:`wirecut.toolpath.build`), and the
    kerf offset may push an end of the path out by up to half the widest kerf. The blank is
    centred in the x travel, so both ends keep the larger of the two."""
    from wirecut.toolpath.kerf import kerf_mm
    from wirecut.toolpath.lag import block_lag_gain_s

    m = job.machine
    w = float(min(max(width_mm, 0.0), m.span_mm))
    z1 = 0.5 * (m.span_mm - w)
    lag = (
        block_lag_gain_s(z1, z1 + w, job.wire, m.span_mm) * job.wire.cut_speed_mm_s
        if w > 0
        else 0.0
    )
    return float(m.home_clearance_mm + lag + 0.5 * float(kerf_mm(0.0, job.wire)))


def sweep_limit(job: JobProfile, width_mm: float) -> float:
    """Longest blank along the sweep (mm) for a strip ``width_mm`` wide along the wire.

    An upright blank needs both of its horizontal sides inside a block's two: a stock kind of
    horizontal sides L >= W takes a strip up to W wide with a blank up to L long, and a strip
    wider than W (up to L) with a blank up to W long. The best kind counts, and the x travel
    minus two home clearances caps it (:func:`split_limits`); a strip no kind takes upright
    keeps the longest side (the allocation may still lay its blank on its side, or says it
    fits no block)."""
    best = 0.0
    for kind in job.stock:
        long_side, short_side = sorted(kind.size_mm[:2], reverse=True)
        if width_mm <= short_side + 1e-6:
            best = max(best, long_side)
        elif width_mm <= long_side + 1e-6:
            best = max(best, short_side)
    _, longest = split_limits(job)
    return float(min(best, longest)) if best > 0.0 else longest


def _candidates(direction: Any) -> list[DirectionFrame]:
    """The frames to try: a DirectionFrame, a sequence of them, or a choice with
    ``best`` and ``runner_up``."""
    if isinstance(direction, DirectionFrame):
        return [direction]
    if hasattr(direction, "best"):
        out = [direction.best]
        runner = getattr(direction, "runner_up", None)
        if (
            runner is not None
            and abs(runner.angle_rad - direction.best.angle_rad) > 1e-9
            and _contends(direction, runner)
        ):
            out.append(runner)
        return out
    return list(direction)


def _contends(choice: Any, runner: DirectionFrame) -> bool:
    """True when the direction search's runner-up is close enough to the best to be split too:
    as much area within tolerance (1 %), at most one estimated piece more, and no steep climb
    along the wire where the best has none. Without the search's table, always."""
    table = getattr(choice, "table", ())
    best = getattr(choice, "score", None)
    deg = float(np.degrees(runner.angle_rad))
    row = next((r for r in table if abs(float(r.get("angle_deg", -1e9)) - deg) < 1e-6), None)
    if not best or row is None or "estimated_pieces" not in row:
        return True
    return (
        row["feasible_area_fraction"] >= best["feasible_area_fraction"] - 0.01
        and row["estimated_pieces"] <= best["estimated_pieces"] + 1
        # a runner-up the search put behind for its steep climb along the wire is not split:
        # fewer pieces would win it back, and its rulings may dip below the bed
        and not (row.get("steep", False) and not best.get("steep", False))
    )


@dataclass(frozen=True, eq=False)
class _PlanFaces:
    """What the split needs of a target's plan view, whatever the wire direction: the
    triangles as sampling prepared them (plan corners, boxes, grid) and the footprint."""

    faces: Any  # wirecut.ruled.sampling.prepared_faces(target)
    footprint: Any  # shapely geometry: the union of the plan triangles

    @classmethod
    def of(cls, target: Any) -> _PlanFaces:
        from wirecut.ruled.sampling import prepared_faces

        prep = prepared_faces(target)
        grid = prep.plan_grid()
        v = np.asarray(target.vertices, float)
        f = np.asarray(target.faces, np.int64)
        up = np.asarray(target.up, float)
        if grid is None:  # every face edge-on: no plan area
            return cls(prep, Polygon())
        fp = footprint(v, f, up, grid=grid, table=getattr(target, "edge_table", None))
        return cls(prep, fp)


#: The cached :class:`_PlanFaces` of a target.
_plan_faces = PerTarget(_PlanFaces.of)


def prepare_split(target: Any) -> None:
    """Build the plan view the split needs (the footprint, from the faces' plan grid) ahead
    of :func:`split_pieces`: the planner does it while the direction search's workers run,
    when this process would otherwise wait."""
    _plan_faces(target)


class _Surface:
    """The target prepared once for all strips: plan triangles, heights, the footprint.

    No face gets a shapely polygon of its own (a million of them took seconds to make and
    hundreds of megabytes to hold): a region's faces come from the plan boxes, and only the
    few that the exact tests need are made into polygons."""

    def __init__(self, target: Any, job: JobProfile, rotation: np.ndarray) -> None:
        self.target = target
        self.vertices = np.asarray(target.vertices, float)
        self.faces = np.asarray(target.faces, np.int64)
        self.up = np.asarray(target.up, float)
        self.rotation = np.asarray(rotation, float)
        # machine y of every vertex before placement: the same for every horizontal wire
        self.h = self.vertices @ self.rotation[1]
        self.face_top = self.h[self.faces].max(axis=1) if len(self.faces) else np.zeros(0)
        self.base_y = float(self.h.min()) - job.mold.base_mm
        plan = _plan_faces(target)
        self.prep, self.fp = plan.faces, plan.footprint

    def top(self, region: Any) -> float:
        """Highest machine y (before placement) of the faces over ``region``, mm.

        Only the highest face that meets the region matters: the faces whose boxes meet the
        region's are tested exactly from the highest down, a batch at a time, and the first
        batch holding a meeting face gives the answer (the same as testing them all)."""
        box = self.prep.faces_near(region)  # boxes only: no exact test yet
        if len(box) == 0:
            return self.base_y
        order = box[np.argsort(-self.face_top[box], kind="stable")]
        shapely.prepare(region)
        for start in range(0, len(order), _TOP_BATCH):
            batch = order[start : start + _TOP_BATCH]
            meets = shapely.intersects(region, triangle_polygons(self.prep.tri_plan[batch]))
            if meets.any():
                return float(self.face_top[batch[meets]].max())
        return self.base_y

    def kept(self, region: Any) -> float:
        """Foam under the surface down to the base plane inside ``region``, mm^3."""
        # the faces whose boxes meet the region's: the volume tests each itself, exactly
        # where it may meet the region's boundary, by its centroid elsewhere
        idx = self.prep.faces_near(region)
        if len(idx) == 0:
            return 0.0
        grid = self.prep.plan_grid()
        near = None
        if grid is not None:
            near = faces_near_boundary(grid, region, len(self.faces))[idx]
        return kept_volume_mm3(
            self.vertices, self.faces[idx], self.up, self.rotation, self.base_y, region,
            near=near,
        )  # fmt: skip


def _place(
    surf: _Surface, region: Any, frame: DirectionFrame, z_lo: float, z_hi: float, job: JobProfile
) -> tuple[Block, np.ndarray]:
    """The block of a region and its placement part -> machine.

    z (along the wire): the strip ``[z_lo, z_hi]``, centred between the tower planes.
    x (sweep): the region's extent plus ``sweep_margin_mm`` at each end, centred in the x
    travel. y: from the common base plane (``mold.base_mm`` under the whole surface's lowest
    point) standing on the bed at ``bed_y_mm``, to the region's top plus ``top_clearance_mm``.
    """
    sweep, _ = plan_axes(frame, surf.up)
    x0, x1 = extent_along(region, sweep)
    margin = job.pieces.sweep_margin_mm
    bx0, bx1 = x0 - margin, x1 + margin
    m = job.machine
    tx = 0.5 * (m.travel_x_mm[0] + m.travel_x_mm[1]) - 0.5 * (bx0 + bx1)
    ty = m.bed_y_mm - surf.base_y
    tz = 0.5 * m.span_mm - 0.5 * (z_lo + z_hi)
    top = surf.top(region) + job.pieces.top_clearance_mm
    block = Block((bx0 + tx, bx1 + tx), (m.bed_y_mm, top + ty), (z_lo + tz, z_hi + tz))
    return block, rigid(frame.rotation, np.array([tx, ty, tz]))


def _coarse_spacing(surf: _Surface, area_mm2: float, job: JobProfile, kappa: float) -> float:
    """Lattice spacing (mm) for the bisection fits: about 4000 samples per strip, but fine
    enough that a smooth maximum is missed by at most 5 % of the tolerance,
    ``h <= sqrt(8 * 0.05 * tol / kappa)`` (nearest lattice point to a smooth extremum). The
    mesh's own edge length does not coarsen it: a fit deviates from a coarse mesh inside its
    planar triangles too."""
    tol = job.tolerance.surface_mm
    h = math.sqrt(max(area_mm2, 1.0) / 4000.0)
    h = min(h, math.sqrt(8.0 * 0.05 * tol / max(kappa, 1e-9)))
    return float(max(h, 0.5))


def _kappa(analysis: Any) -> float:
    """95th percentile of the larger principal curvature, 1/mm (0 when unknown)."""
    k1 = getattr(analysis, "k1", None)
    k2 = getattr(analysis, "k2", None)
    if k1 is None or k2 is None:
        curv = getattr(analysis, "curvature", None)
        k1 = getattr(curv, "k1", None)
        k2 = getattr(curv, "k2", None)
    if k1 is None or k2 is None:
        return 0.0
    k = np.maximum(np.abs(np.asarray(k1, float)), np.abs(np.asarray(k2, float)))
    k = k[np.isfinite(k)]
    return float(np.percentile(k, 95)) if k.size else 0.0


def _reach(analysis: Any) -> np.ndarray | None:
    r = getattr(analysis, "wire_reach_mm", None)
    return None if r is None else np.asarray(r, float)


def _default_fitter() -> Callable[..., Any]:
    from wirecut.ruled.fit import fit_cut

    return fit_cut


def _skew_of(fit: Any, transform: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """The ruling skew of a skewed fit as (sweep positions in the part plan, i.e. machine x
    less the placement's x shift; skew = right face x - left face x), mm; None otherwise."""
    if not getattr(fit, "skewed", False):
        return None
    cut = fit.cut
    mid = 0.5 * (cut.left[:, 0] + cut.right[:, 0]) - float(transform[0, 3])
    return mid, cut.right[:, 0] - cut.left[:, 0]


def _fit(
    fitter, target, region, block, transform, job, spacing, enough_mm=None, skew_hint=None,
    ridges=None, parallel=False, x_pad=0.0,
):  # fmt: skip
    from wirecut.ruled.sampling import judging_samples, sample_target

    if spacing is None:
        samples = judging_samples(target, transform, region)
    else:
        samples = sample_target(target, transform, region=region, spacing_mm=spacing).merged()
        if len(samples) > 4.0 * region.area / spacing**2:
            # a mesh much finer than the spacing (its lattice is its vertices): about two
            # samples per spacing squared, as the lattice of a coarser mesh would give
            samples = samples.thinned(0.5 * spacing)
    if len(samples) == 0 or np.all(samples.undercut):
        return None
    more = {} if enough_mm is None else {"enough_mm": enough_mm}
    if parallel:
        more["correspondence"] = False
        skew_hint = None
    else:
        # no blank along the sweep is shorter than the minimum width (``_shorter``): a ruling
        # leaning further than the towers can follow beside that one drives on none
        more["max_slope"] = job.machine.drivable_slope(job.pieces.min_width_mm)
    if skew_hint is not None:
        more["skew_hint"] = skew_hint
    if ridges is not None and len(ridges):  # sweep coordinates: machine x less the shift
        more["knots_at"] = np.asarray(ridges, float) + float(transform[0, 3])
    if ridges is not None and not parallel:
        # creases along the wire but not parallel to it, each followed by a skewed ruling
        # (those parallel to it are the ridges above)
        # as long along the sweep as the strip's pieces will be (``sweep_cuts``)
        margin = job.pieces.sweep_margin_mm
        extent = block.size_mm[0] - 2.0 * margin
        room = sweep_limit(job, block.size_mm[1]) - 2.0 * margin
        parts = max(1, math.ceil(extent / room - 1e-9)) if room > 0 else 1
        steep = job.machine.drivable_slope(extent / parts + 2.0 * margin)
        x_mid, skew = crease_lines(
            target, transform, block.z_mm[0], block.z_mm[1], region, max_slope=steep
        )
        oblique = np.abs(skew) > PARALLEL_SKEW_MM
        if oblique.any():
            more["crease_lines"] = (x_mid[oblique], skew[oblique])
    try:
        return fitter(
            samples, block.z_mm[0], block.z_mm[1], transform, job.tolerance,
            x_range=(block.x_mm[0] - x_pad, block.x_mm[1] + x_pad),
            **more,
        )  # fmt: skip
    except JobError:  # too few reachable samples in the region: nothing a wire can fit
        return None


def _layout(
    surf: _Surface, frame: DirectionFrame, cuts: np.ndarray, job: JobProfile
) -> tuple[list[tuple[int, Polygon, float, float]], list[Polygon]]:
    """(pieces, fragments left out). A piece is (strip index, polygon, z_lo, z_hi): strips,
    splits along the sweep (:func:`wirecut.pieces.layout.placed_sweep_cuts`), connected
    parts; neighbours are clipped at the same coordinate, so they share cut lines. The
    fragments are those :func:`wirecut.pieces.layout.fragments` leaves out."""
    sweep, wire = plan_axes(frame, surf.up)
    out = []
    for k in range(len(cuts) - 1):
        a, b = float(cuts[k]), float(cuts[k + 1])
        band = strip(surf.fp, wire, a, b)
        if band.is_empty:
            continue
        x0, x1 = extent_along(band, sweep)
        # the blank must fit a block with both horizontal sides: a wide strip, a shorter blank
        limit = sweep_limit(job, b - a)
        xs = placed_sweep_cuts(band, sweep, x0, x1, job, limit)
        for poly in parts_between(band, sweep, xs):
            out.append((k, poly, a, b))
    return fragments(out, sweep, job, lambda width: sweep_limit(job, width))


def split_pieces(
    target: Any,
    analysis: Any,
    direction: Any,
    job: JobProfile,
    progress: Callable[[str, int, int], None] | None = None,
    *,
    fitter: Callable[..., Any] | None = None,
    resolution_mm: float | None = None,
    first_id: int = 1,
    judge: Judge | None = None,
) -> SplitResult:
    """Split the mold into pieces that one ruled cut each can make within tolerance.

    Parameters
    ----------
    target : TargetSurface
        ``vertices (n, 3) mm part``, ``faces (m, 3)``, ``face_normals``, ``up``.
    analysis : SurfaceAnalysis or None
        Supplies ``wire_reach_mm (n,)`` for the lower bound and curvatures for the coarse
        sample spacing; None is allowed.
    direction : DirectionFrame, sequence of DirectionFrame, or DirectionChoice
        Candidate wire directions; with a choice, its ``best`` and ``runner_up`` are both split
        and the one with fewer pieces kept (ties: the smaller max deviation of the final fits in
        steps of a tenth of the tolerance, then the search's order).
    job : JobProfile
    progress : callable (stage, done, total), optional
    fitter : callable, optional
        ``fit(samples, z_left, z_right, part_to_machine, tolerance, x_range) -> RuledFit``;
        default :func:`wirecut.ruled.fit.fit_cut`.
    resolution_mm : float, optional
        Bisection grid step along the wire; default 1 % of the widest strip, at least 1 mm.
    first_id : int
        Number of the first piece (``P01`` for 1): the zones of a part are split one after
        the other and numbered on (:mod:`wirecut.pieces.zones`).
    judge : Judge, optional
        The planner's own program stage put to a trial piece: whether a program can drive its
        cut within the machine's travel, and the largest deviation (mm) of that program's
        replay. Given, a piece whose skewed rulings :func:`tower_overrun_mm` finds past the x travel
        and that parallel rulings cannot cut within the tolerance is cut shorter along the
        sweep, where the shorter blanks' skewed cuts can be driven (:func:`_shorter`).

    Returns
    -------
    SplitResult
    """
    fitter = fitter or _default_fitter()
    frames = _candidates(direction)
    if not frames:
        raise ValueError("split_pieces needs at least one wire direction")
    surf = _Surface(target, job, frames[0].rotation)
    if surf.fp.is_empty:
        raise JobError("the target has no plan-view area to cut (every face is vertical)")
    max_w, _ = split_limits(job)
    min_w = job.pieces.min_width_mm
    step = resolution_mm or max(1.0, 0.01 * max_w)
    tol = job.tolerance.surface_mm
    budget = fit_budget(job)
    kappa = _kappa(analysis)
    report = progress or (lambda stage, done, total: None)

    trials = []
    for frame in frames:
        sweep, wire = plan_axes(frame, surf.up)
        lo, hi = extent_along(surf.fp, wire)
        # creases along the wire: the cuts' knots go there (wirecut.geometry.creases)
        ridges = break_lines(target, sweep, 0.25 * min_w)

        def probe(
            ab: tuple[float, float], frame=frame, wire=wire, ridges=ridges
        ) -> tuple[float, Any]:
            """(the strip's coarse-fit deviation over its budget, feasible when <= 1; the
            skew of its rulings when they are skewed, as a hint for the pieces' final fits).
            The fit stops at the first cut within the budget."""
            a, b = ab
            region = strip(surf.fp, wire, a, b)
            if region.is_empty:
                return 0.0, None
            block, transform = _place(surf, region, frame, a, b, job)
            spacing = _coarse_spacing(surf, region.area, job, kappa)
            allowed = budget * tol
            fit = _fit(
                fitter, target, region, block, transform, job, spacing, allowed, ridges=ridges
            )
            if fit is None:
                return 0.0, None
            return float(fit.report.max_abs_mm) / allowed, _skew_of(fit, transform)

        hints: dict[tuple[float, float], Any] = {}

        def feasible(a: float, b: float, hints=hints, probe=probe) -> float:
            hints[(a, b)] = probe((a, b))
            return hints[(a, b)][0]

        reach = _reach(analysis)
        guess = None
        if reach is not None and np.any(np.isfinite(reach)):
            guess = float(np.nanmedian(reach))
        with forked(probe) as many:

            def feasible_many(pairs, hints=hints, many=many):
                out = many(pairs)
                hints.update(zip(pairs, out, strict=True))
                return [r for r, _ in out]

            # the strips are searched between the creases along the sweep, which no strip
            # can straddle (wirecut.geometry.creases)
            spans = segments(lo, hi, break_lines(target, wire, 0.25 * min_w), min_w)
            parts = []
            for k, (a, b) in enumerate(spans):
                last = k == len(spans) - 1
                part = greedy_strips(
                    a, b, feasible, max_w, min_w, step, guess_mm=guess,
                    feasible_many=feasible_many, end_is_cut=not last,
                )  # fmt: skip
                parts.append(part)
            plan = StripPlan.joined(parts)
        layout, dropped = _layout(surf, frame, plan.cuts, job)
        bound = strip_count_bound(hi - lo, _reach(analysis), max_w)
        trials.append((frame, plan, layout, bound, hints, ridges, dropped))
        report("split", len(trials), len(frames))

    fewest = min(len(t[2]) for t in trials)
    tied = [t for t in trials if len(t[2]) == fewest]
    built = {}
    for t in tied:
        built[id(t)] = _build(surf, t, target, job, fitter, report, first_id, judge)
    # final deviations within a tenth of the tolerance are alike: the direction search's order
    # decides there (its best first), which weighs the climb along the wire; a coffer's
    # chamfer, exact both ways, took the runner-up's oblique wire by a micron and could not
    # be driven above the bed
    alike = 0.1 * job.tolerance.surface_mm
    best = min(tied, key=lambda t: (round(built[id(t)][1] / alike), trials.index(t)))
    pieces, max_dev, findings, bad_area = built[id(best)]
    rows = tuple(
        DirectionRow(
            float(np.degrees(t[0].angle_rad)),
            t[1].count,
            len(t[2]),
            t[3],
            built[id(t)][1] if id(t) in built else float("nan"),
            t is best,
        )
        for t in trials
    )
    frame, plan, layout, bound, _, _, dropped = best
    if plan.count < bound:
        findings.append(
            Finding(
                "strips-below-bound",
                f"{plan.count} strips is fewer than the wire-reach bound {bound}: "
                "the reach estimate is conservative here",
                severity=Severity.INFO,
            )
        )
    fragments = tuple(float(p.area) for p in dropped)
    if fragments:
        findings.append(fragment_finding(fragments, job))
    return SplitResult(
        pieces=tuple(pieces),
        findings=tuple(findings),
        infeasible_area_mm2=bad_area,
        lower_bound=bound,
        directions=rows,
        footprint_area_mm2=float(surf.fp.area),
        cuts_mm=plan.cuts,
        fragment_areas_mm2=fragments,
    )


def tower_overrun_mm(fit: Any, block: Block, job: JobProfile) -> float:
    """How far (mm) the span of tower positions a cut's rulings need along the sweep exceeds
    the x travel, with the lead room at both ends (:func:`lead_room_mm`); 0 when they fit
    somewhere in it. A quick estimate before any program is built: each ruling extended to
    the two tower planes (similar triangles multiply its skew by the span over the blank's
    width), its ends on either tower counted."""
    cut = fit.cut
    m = job.machine
    xs = np.concatenate([cut.at_plane(0.0)[:, 0], cut.at_plane(m.span_mm)[:, 0]])
    width = float(block.z_mm[1] - block.z_mm[0])
    need = float(xs.max() - xs.min()) + 2.0 * lead_room_mm(job, width)
    return max(need - float(m.travel_x_mm[1] - m.travel_x_mm[0]), 0.0)


@dataclass(frozen=True)
class Judge:
    """The planner's program stage, put to a trial piece (:func:`_trial_piece`) by the split.

    ``drivable(piece) -> bool``: a program can drive the piece's cut within the machine's
    travel (as placed, moved along the wire or on a riser); ``replayed(piece) -> float or
    None``: the largest deviation (mm) of that program's replay, None without a program. The
    replay is most of the cost, so the split asks ``drivable`` where that is all it needs.
    """

    drivable: Callable[[Piece], bool]
    replayed: Callable[[Piece], float | None]


def _trial_piece(region: Polygon, block: Block, transform: np.ndarray, fit: Any) -> Piece:
    """A piece to put to the planner's judge before the split numbers its pieces."""
    outline = np.asarray(region.exterior.coords)[:-1]
    return Piece("P00", outline, None, transform, block, fit, stock=None, extra={})


#: At most this many blanks along the sweep replace one whose skewed cut cannot be driven.
_SHORTER_PARTS = 4


def _shorter(fit_part, item, one, wide, sweep, job, fitter_parallel, judge, hold):
    """The pieces (polygon, block, transform, fit) that replace ``one``, the fit of layout
    ``item``, when its best cut cannot be driven on one blank.

    The best cut is ``wide`` (a fit whose rulings run past the blank's ends, better than
    ``one`` but one the towers cannot follow), else ``one``'s own. ``one`` itself stays
    unless all of these hold:
    - the best cut is skewed and within the tolerance;
    - no program can drive it (:func:`tower_overrun_mm`, then ``judge.drivable``);
    - what can be driven on one blank leaves more than the fit's share ``hold`` (mm) of the
      tolerance, and more than the tolerance once driven (``judge.replayed``): ``one``'s own
      cut where that is drivable within the tolerance and ``wide`` was the best, else
      parallel rulings.
    Then it is the fewest equal parts along the sweep (2 to ``_SHORTER_PARTS``, none shorter
    than the minimum width) whose own fits, started from the best cut's skew, all stay
    within ``hold`` or the best cut's deviation and whose own programs can all be driven
    (``judge.drivable``); or else the fewest whose programs all stay within the tolerance
    once replayed (``judge.replayed``, asked only when every part can be driven). A shorter
    blank stands nearer the middle of the travel, and its end rulings swing the towers less
    far out.

    Returns (pieces, why): ``why`` is None for ``one`` itself, else (the towers' estimated
    overrun of the best cut on one blank, mm; the deviation of what could be driven, mm)."""
    _, poly, a, b = item
    _, block, transform, fit = one
    tol = job.tolerance.surface_mm

    def fine(f, blk, tf, region, bound) -> bool:
        if f is None or f.report.max_abs_mm > bound:
            return False
        if not getattr(f, "skewed", False) or tower_overrun_mm(f, blk, job) <= 0.0:
            return True
        return judge.drivable(_trial_piece(region, blk, tf, f))

    def driven_within(f) -> bool:
        """The fit ``f`` of the whole piece stays within the tolerance once driven."""
        if f is None:
            return False
        if f.report.max_abs_mm <= hold:
            return True
        if f.report.max_abs_mm > tol:
            return False
        driven = judge.replayed(_trial_piece(poly, block, transform, f))
        return driven is not None and driven <= tol

    if fit is None:
        return [one], None
    best = fit if wide is None else wide
    if not getattr(best, "skewed", False) or best.report.max_abs_mm > tol:
        return [one], None
    if fine(fit, block, transform, poly, tol):
        if wide is None:
            return [one], None
        drivable = fit
    else:  # parallel rulings, as the program stage would refit it
        drivable = fitter_parallel(poly, block, transform)
        if drivable is not None and driven_within(drivable):
            return [one], None
        worse = drivable is None or fit.report.max_abs_mm < drivable.report.max_abs_mm
        if wide is not None and worse and fine(fit, block, transform, poly, np.inf):
            drivable = fit  # out of the tolerance, but less so
    if drivable is None or driven_within(drivable):
        return [one], None
    why = (tower_overrun_mm(best, block, job), float(drivable.report.max_abs_mm))
    bound = max(hold, float(best.report.max_abs_mm))
    skew = _skew_of(best, transform)
    x0, x1 = extent_along(poly, sweep)
    within = None  # the first parts that are all drivable within the tolerance
    for n in range(2, _SHORTER_PARTS + 1):
        if (x1 - x0) / n < job.pieces.min_width_mm:
            break
        xs = np.linspace(x0, x1, n + 1)
        parts = [q for i in range(n) for q in polygons_of(strip(poly, sweep, xs[i], xs[i + 1]),
                                                          min_area_mm2=1e-3)]  # fmt: skip
        fitted = [fit_part(q, a, b, skew)[0] for q in parts]
        # each part's own program decides, whatever the estimate: a part can fail for the
        # bed or the y travel as well as for the x travel
        trials = [None if f is None or f.report.max_abs_mm > tol else _trial_piece(q, blk, tf, f)
                  for q, blk, tf, f in fitted]  # fmt: skip
        drivable = [t is not None and judge.drivable(t) for t in trials]
        if all(d and f.report.max_abs_mm <= bound
               for d, (_, _, _, f) in zip(drivable, fitted, strict=True)):  # fmt: skip
            return fitted, why
        if within is None and all(drivable):  # only then are the replays worth their time
            driven = [judge.replayed(t) for t in trials]
            if all(d is not None and d <= tol for d in driven):
                within = fitted
    return ([one], None) if within is None else (within, why)


def _build(surf, trial, target, job, fitter, report, first_id: int = 1, judge=None):
    """Final pieces of one direction: blocks, full-density fits, volumes, findings."""
    frame, plan, layout, _, hints, ridges, _ = trial
    sweep, _ = plan_axes(frame, surf.up)
    pieces: list[Piece] = []
    findings: list[Finding] = []
    bad_area = 0.0
    max_dev = 0.0
    tallest = max(s.size_mm[2] for s in job.stock)
    hold = fit_budget(job) * job.tolerance.surface_mm

    def fit_part(poly, a, b, hint=None):
        """((poly, block, transform, fit), wide): ``hint`` is a skew to start from (the
        split's strip's by default), sweep positions in the plan frame (:func:`_skew_of`);
        ``wide`` a better fit whose rulings run past the blank's ends that the towers cannot
        follow (else None)."""
        block, transform = _place(surf, poly, frame, a, b, job)
        ratio, strip_skew = hints.get((a, b), (None, None))
        hint = strip_skew if hint is None else hint
        if hint is not None:  # the skew, from its frame to this piece's
            hint = (hint[0] + transform[0, 3], hint[1])
        fit = _fit(fitter, target, poly, block, transform, job, None, skew_hint=hint, ridges=ridges)
        one = (poly, block, transform, fit)
        if fit is None or hint is None or ratio is None:
            return one, None
        # a piece of a strip can fit worse than the strip itself: its end rulings must cover
        # its own corners, which holds their skew down there (``skew.end_bounds``). Where it
        # does by a tenth of the tolerance, the rulings may run past the blank's ends by half
        # the strip's skew (through the waste beyond the outline), if the towers can follow
        pad = 0.5 * float(np.abs(hint[1]).max())
        if pad < 1.0 or fit.report.max_abs_mm <= ratio * hold + 0.1 * job.tolerance.surface_mm:
            return one, None
        wide = _fit(fitter, target, poly, block, transform, job, None, skew_hint=hint,
                    ridges=ridges, x_pad=pad)  # fmt: skip
        if wide is None or wide.report.max_abs_mm >= fit.report.max_abs_mm:
            return one, None
        if tower_overrun_mm(wide, block, job) > 0.0:
            if judge is None:
                return one, None
            if not judge.drivable(_trial_piece(poly, block, transform, wide)):
                return one, wide
        return (poly, block, transform, wide), None

    def parallel(poly, block, transform):
        return _fit(fitter, target, poly, block, transform, job, None, ridges=ridges, parallel=True)

    def final(item):
        _, poly, a, b = item
        one, wide = fit_part(poly, a, b)
        if judge is None:
            return [one], None
        return _shorter(fit_part, item, one, wide, sweep, job, parallel, judge, hold)

    report("fit", 0, len(layout))
    fits = pmap(final, layout, done=lambda n: report("fit", n, len(layout)))
    for (k, _, a, b), (parts, why) in zip(layout, fits, strict=True):
        for n_part, (poly, block, transform, fit) in enumerate(parts):
            if fit is None:
                continue
            pid = f"P{len(pieces) + first_id:02d}"
            tol = job.tolerance.surface_mm
            if n_part == 0 and why is not None:
                ids = [f"P{len(pieces) + first_id + i:02d}" for i in range(len(parts))]
                findings.append(
                    Finding(
                        "shorter-for-skew",
                        f"{', '.join(ids[:-1])} and {ids[-1]} are one piece cut in "
                        f"{len(parts)} blanks along the sweep: on one blank its best skewed "
                        f"rulings would swing the towers about {why[0]:.0f} mm past the x "
                        f"travel, and the best cut they can follow there leaves "
                        f"{why[1]:.2f} mm; each shorter blank's own skewed cut can be driven",
                        piece=pid,
                        severity=Severity.INFO,
                    )
                )
            # the dense final fit decides where the coarse one of the width search failed
            ok = bool(plan.feasible[k]) or fit.report.max_abs_mm <= fit_budget(job) * tol
            if not ok and fit.report.max_abs_mm > tol:
                bad_area += poly.area
                findings.append(
                    Finding(
                        "strip-infeasible",
                        f"{poly.area / 1e6:.3f} m^2 cannot be cut within {tol:g} mm even at "
                        f"the minimum width {job.pieces.min_width_mm:g} mm "
                        f"(max deviation {fit.report.max_abs_mm:.2f} mm)",
                        piece=pid,
                    )
                )
            elif not ok:
                findings.append(
                    Finding(
                        "thin-lag-margin",
                        f"at the minimum width {job.pieces.min_width_mm:g} mm the fit deviates "
                        f"up to {fit.report.max_abs_mm:.2f} mm, more than its share "
                        f"{fit_budget(job) * tol:.2f} mm of the {tol:g} mm tolerance: less is "
                        "left for the wire lag",
                        piece=pid,
                        severity=Severity.INFO,
                    )
                )
            height = block.size_mm[2]
            if height > tallest:
                findings.append(
                    Finding(
                        "blank-too-tall",
                        f"the blank is {height:.0f} mm high, above every stock height "
                        f"(at most {tallest:.0f} mm): only a block laid on its side can hold "
                        "it; the stock findings say whether one does",
                        piece=pid,
                    )
                )
            if block.y_mm[1] > job.machine.travel_y_mm[1]:
                findings.append(
                    Finding(
                        "above-travel",
                        f"the blank's top at machine y = {block.y_mm[1]:.0f} mm is above the "
                        f"y travel ({job.machine.travel_y_mm[1]:g} mm)",
                        piece=pid,
                    )
                )
            max_dev = max(max_dev, float(fit.report.max_abs_mm))
            extra = {
                "strip_mm": (a, b),
                "feasible": ok,
                "kept_volume_mm3": surf.kept(poly),
                "holes_plan": [np.asarray(r.coords)[:-1] for r in poly.interiors],
                # the final fit's samples are the plan's check samples of this piece (judging
                # samples of the same outline; no holes to add boundary samples)
                "fit_on_check_samples": not poly.interiors,
            }
            outline = np.asarray(poly.exterior.coords)[:-1]
            pieces.append(
                Piece(pid, outline, frame, transform, block, fit, stock=None, extra=extra)
            )
    return pieces, max_dev, findings, bad_area
