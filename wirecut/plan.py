"""The pipeline: mesh + job -> Plan, and the writer of a plan's files.

Data flows one way: intake -> surface analysis -> wire direction -> pieces (each with its
ruled fit) -> stock allocation -> cut programs -> (in-memory replay for the prediction) ->
files. This is the only module that knows every stage.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Callable
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from typing import NamedTuple

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import OutputError
from wirecut.findings import Finding, Severity

# the density (relative to the default sampling) programs are judged at, that of
# wirecut.ruled.sampling.judging_samples, which the final fits use too
from wirecut.ruled.sampling import JUDGING_DENSITY as CHECK_DENSITY

__all__ = [
    "PiecePlan",
    "Plan",
    "make_plan",
    "write_plan",
    "plan_json",
    "replay_report",
    "check_samples",
    "CHECK_DENSITY",
]

Progress = Callable[[str, int, int], None]


def _no_progress(stage: str, done: int, total: int) -> None:
    return None


def check_samples(target, part_to_machine: np.ndarray, region):
    """Target samples (machine frame) on which a piece's program is judged, by ``plan`` and by
    ``simulate`` alike (:func:`wirecut.ruled.sampling.judging_samples`)."""
    from wirecut.ruled.sampling import judging_samples

    return judging_samples(target, part_to_machine, region)


def _piece_samples(target, piece):
    """The check samples of a piece: the samples its final fit was made on where the split
    says they are the same (``extra["fit_on_check_samples"]``: judging samples of the same
    outline, moved with the piece by :func:`_shifted`), else sampled afresh."""
    own = getattr(piece.fit, "samples", None)
    extra = piece.extra if isinstance(piece.extra, dict) else {}
    if own is not None and extra.get("fit_on_check_samples"):
        return own
    return check_samples(target, piece.part_to_machine, piece.region_plan)


def replay_report(result, samples, tolerance_mm: float):
    """The DeviationReport of a replayed program against the target samples."""
    from wirecut.ruled.deviation import report_from_signed

    signed = np.asarray(result.signed, float)
    return report_from_signed(
        signed, samples.weights, samples.undercut, ~np.isfinite(signed), tolerance_mm
    )


@dataclass(frozen=True)
class PiecePlan:
    """One piece with its program and the predicted error of that program.

    Attributes
    ----------
    piece : Piece
        Region, block, frame and fitted cut.
    program : CutProgram or None
        The cut program; None when the piece cannot be cut on this machine (see findings).
    toolpath : ToolpathReport or None
        Kerf ranges, dwell, overshoot, face profiles and tower paths.
    prediction : ReplayResult or None
        The in-memory replay of ``program`` against the target: the deviation the program
        will make, kerf and lag included.
    samples : TargetSamples
        The target samples of the piece (machine frame) the deviations refer to.
    gcode : str or None
        The program text in the job's dialect.
    """

    piece: object
    program: object
    toolpath: object
    prediction: object
    samples: object
    gcode: str | None

    @cached_property  # computed once: the summary, the table and the findings all read it
    def deviation(self):
        """The deviation report a user should believe: the replayed program, else the fit."""
        if self.prediction is not None:
            return replay_report(self.prediction, self.samples, self.piece.fit.report.tolerance_mm)
        return self.piece.fit.report


@dataclass(frozen=True)
class Plan:
    """The whole job's result. Every number of plan.json comes from here."""

    target: object
    analysis: object
    job: JobProfile
    direction: object
    split: object
    allocation: object
    pieces: tuple[PiecePlan, ...]
    findings: tuple[Finding, ...]

    def summary(self) -> dict:
        """The ``summary`` part of plan.json."""
        return plan_json(self)["summary"]

    def table(self) -> list[str]:
        """Terminal summary: the totals, then one line per piece."""
        s = self.summary()
        tol = self.job.tolerance
        programs = sum(pp.program is not None for pp in self.pieces)
        # the total covers the pieces with a program only: say so when some have none
        partial = (
            f"   ({programs} of {len(self.pieces)} pieces have a program)"
            if programs < len(self.pieces)
            else ""
        )
        lines = [
            f"wirecut plan  (tolerance {tol.surface_mm:g} mm, {tol.policy.value})",
            f"  feasible area      {s['feasible_area_fraction'] * 100:8.1f} %",
            f"  max deviation      {s['max_deviation_mm']:8.3f} mm",
            f"  pieces             {s['pieces']:8d}   (lower bound {self.split.lower_bound})",
            f"  blocks used        {s['blocks_used']:8d}",
            f"  foam / kept        {s['foam_volume_m3']:8.3f} / {s['kept_volume_m3']:.3f} m^3"
            f"   (waste {s['waste_fraction'] * 100:.1f} %)",
            f"  machine time       {s['machine_time_s'] / 60:8.1f} min{partial}",
            "  piece  stock       max dev   rms     feasible  time",
        ]
        for pp in self.pieces:
            r = pp.deviation
            t = (
                f"{pp.program.machine_time_s / 60:6.1f} min"
                if pp.program is not None
                else "no program"
            )
            lines.append(
                f"  {pp.piece.id:<6} {pp.piece.stock or '-':<10} {r.max_abs_mm:7.3f} "
                f"{r.rms_mm:7.3f}   {r.feasible_area_fraction * 100:6.1f} %  {t}"
            )
        return lines


def make_plan(
    target,
    job: JobProfile,
    intake_findings: list[Finding] | tuple[Finding, ...] = (),
    progress: Progress | None = None,
) -> Plan:
    """Plan the whole job for a target surface (part frame, mm).

    One wire direction for the whole part first; where that leaves pieces without a program
    or out of tolerance and the target's creases divide it into zones
    (:mod:`wirecut.pieces.zones`), each zone is planned with a direction of its own, and the
    zoned plan is kept when it leaves less of the surface uncut or out of tolerance
    (:func:`_shortfall`), or as little with fewer pieces.
    """
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.geometry.roughness import roughness_finding
    from wirecut.pieces.zones import crease_zones
    from wirecut.ruled.sampling import prepare_sampling

    progress = progress or _no_progress
    findings: list[Finding] = list(intake_findings)
    prepare_sampling(target)  # before any worker process is forked
    progress("analysis", 0, 1)
    analysis = analyse_surface(target, job)
    progress("analysis", 1, 1)
    rough = roughness_finding(analysis.curvature.roughness, job.tolerance.surface_mm)
    if rough is not None:
        findings.append(rough)
    layout = _layout(target, analysis, job, progress)
    if _shortfall(layout.plans)[0] > 0.0:
        zones = crease_zones(target)
        if zones:
            zoned = _zoned_layout(target, zones, job, progress, layout.split.lower_bound)
            if zoned is not None and _shortfall(zoned.plans) < _shortfall(layout.plans):
                layout = zoned
                findings.append(_zoned_finding(layout))
    directions, split, allocation, plans, piece_findings = layout
    findings.extend(split.findings)
    findings.extend(getattr(allocation, "findings", ()))
    findings.extend(piece_findings)
    findings.extend(_outside_pieces(target, plans, sum(split.fragment_areas_mm2)))

    tol = job.tolerance.surface_mm
    for pp in plans:
        r = pp.deviation
        if r.max_abs_mm > tol:
            share = 1.0 - r.feasible_area_fraction
            findings.append(
                Finding(
                    "out-of-tolerance",
                    f"max deviation {r.max_abs_mm:.3f} mm exceeds the {tol:g} mm tolerance on "
                    f"{share * 100:.1f}% of the piece's area",
                    piece=pp.piece.id,
                )
            )
        if r.undercut_area_fraction > 0:
            findings.append(
                Finding(
                    "undercut",
                    f"{r.undercut_area_fraction * 100:.1f}% of the piece's area cannot be reached "
                    "by the wire from the waste side",
                    piece=pp.piece.id,
                )
            )
    for k, direction in enumerate(directions):
        runner = getattr(direction, "runner_up", None)
        if runner is None:
            continue
        zone = f"zone {k + 1} of {len(directions)}: " if len(directions) > 1 else ""
        findings.append(
            Finding(
                "direction-choice",
                f"{zone}wire at {np.degrees(direction.best.angle_rad):.0f} deg in plan; runner-up "
                f"{np.degrees(runner.angle_rad):.0f} deg: {direction.reason}",
                severity=Severity.INFO,
            )
        )
    direction = directions[0] if len(directions) == 1 else directions
    return Plan(target, analysis, job, direction, split, allocation, tuple(plans), tuple(findings))


class _Layout(NamedTuple):
    """A way to cut the part: the wire direction of each zone (one for the whole part, or one
    per zone), the split, the stock allocation, the piece plans and their findings."""

    directions: tuple
    split: object
    allocation: object
    plans: list
    findings: list


def _directed_split(target, analysis, job: JobProfile, progress: Progress, first_id: int = 1):
    """(direction choice, split) of a target: the direction search, then the split."""
    from wirecut.pieces.split import Judge, prepare_split, split_pieces
    from wirecut.ruled.direction import search_direction

    # the split's plan view does not depend on the direction: built while the search runs
    direction = search_direction(target, analysis, job, meanwhile=lambda: prepare_split(target))
    judge = Judge(
        drivable=lambda piece: _drivable(piece, job),
        replayed=lambda piece: _judged(target, piece, job),
    )
    return direction, split_pieces(
        target, analysis, direction, job, progress=progress, first_id=first_id, judge=judge
    )


def _judged(target, piece, job: JobProfile) -> float | None:
    """The largest deviation (mm) of ``piece``'s replayed program as :func:`_piece_plan`
    builds it (as placed, moved along the wire, or on a riser); None without a program."""
    from wirecut.errors import WirecutError

    try:
        pp, _ = _piece_plan(target, piece, job)
    except WirecutError:
        return None
    return None if pp.program is None else float(pp.deviation.max_abs_mm)


def _drivable(piece, job: JobProfile) -> bool:
    """Whether :func:`_piece_plan` finds a program for ``piece`` (as placed, moved along the
    wire, or on a riser): :func:`_judged` is not None, without the replay."""
    from wirecut.errors import WirecutError
    from wirecut.gcode.writer import normalize_program

    try:
        program = _placed_program(piece, job)[1]
        return program is not None and normalize_program(program, job) is not None
    except WirecutError:
        return False


def _layout(target, analysis, job: JobProfile, progress: Progress) -> _Layout:
    """The part cut with one wire direction: the direction search, the split, the stock and
    the programs."""
    from wirecut.pieces.stock import allocate

    direction, split = _directed_split(target, analysis, job, progress)
    allocation = allocate(split.pieces, job)
    plans, found = _programs([(p, target) for p in split.pieces], allocation, job, progress)
    return _Layout((direction,), split, allocation, plans, found)


def _zoned_layout(
    target, zones, job: JobProfile, progress: Progress, lower_bound: int
) -> _Layout | None:
    """The layout of :func:`_layout` with each zone (face indices of ``target``) planned on
    its own target with its own direction, the pieces numbered on from zone to zone and
    allocated to the stock together; None when a zone cannot be planned."""
    from wirecut.errors import WirecutError
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.pieces.layout import fragment_finding
    from wirecut.pieces.split import SplitResult
    from wirecut.pieces.stock import allocate
    from wirecut.pieces.zones import zone_target
    from wirecut.ruled.sampling import prepare_sampling

    directions, splits, items = [], [], []
    try:
        for faces in zones:
            zone = zone_target(target, faces, job)
            prepare_sampling(zone)  # before any worker process is forked
            analysis = analyse_surface(zone, job)
            direction, split = _directed_split(zone, analysis, job, progress, len(items) + 1)
            directions.append(direction)
            splits.append(split)
            items += [(p, zone) for p in split.pieces]
    except WirecutError:
        return None
    pieces = tuple(p for p, _ in items)
    fragments = tuple(a for s in splits for a in s.fragment_areas_mm2)
    # a zone's own strip bound is no bound of the part's (``lower_bound`` is): its "fewer
    # strips than the bound" notes would only puzzle; the fragments are said once for the part
    quiet = ("strips-below-bound", "outline-fragments")
    notes = [f for s in splits for f in s.findings if f.code not in quiet]
    if fragments:
        notes.append(fragment_finding(fragments, job))
    split = SplitResult(
        pieces=pieces,
        findings=tuple(notes),
        infeasible_area_mm2=sum(s.infeasible_area_mm2 for s in splits),
        lower_bound=lower_bound,  # the part's bound, whatever its layout
        directions=tuple(r for s in splits for r in s.directions),
        footprint_area_mm2=sum(s.footprint_area_mm2 for s in splits),
        cuts_mm=splits[0].cuts_mm,
        fragment_areas_mm2=fragments,
    )
    allocation = allocate(pieces, job)
    plans, found = _programs(items, allocation, job, progress)
    return _Layout(tuple(directions), split, allocation, plans, found)


def _shortfall(plans) -> tuple[float, int]:
    """(surface area, mm^2, of the pieces without a program and of the out-of-tolerance share
    of the others; the piece count): what a layout leaves undone, least first."""
    bad = 0.0
    for pp in plans:
        area = float(pp.samples.area_mm2)
        bad += area if pp.program is None else area * (1.0 - pp.deviation.feasible_area_fraction)
    return bad, len(plans)


def _zoned_finding(layout: _Layout) -> Finding:
    """``zoned-directions`` (info): the zones and their wire directions."""
    directions = layout.directions
    angles = ", ".join(f"{np.degrees(d.best.angle_rad):.0f}" for d in directions)
    return Finding(
        "zoned-directions",
        f"one wire direction for the whole part left pieces undrivable or out of tolerance: "
        f"the creases divide the surface into {len(directions)} zones, each cut with its own wire "
        f"direction ({angles} deg in plan); pieces of neighbouring zones meet along the "
        "creases and are trimmed to their outlines",
        severity=Severity.INFO,
    )


def _programs(items, allocation, job: JobProfile, progress: Progress):
    """(piece plans, findings) of ``items`` ((piece, its target) pairs): each piece's program,
    a parallel refit where its skewed one fails, built in worker processes."""
    from dataclasses import replace

    from wirecut.workers import pmap

    stock_of = {p.piece_id: p.stock for p in allocation.placements}
    tol = job.tolerance.surface_mm

    def standing(pp, tf) -> tuple:
        """Worse first: no program, out of tolerance, a face slower than the kerf law knows
        (the replay holds its kerf at the slowest measured speed, so it cannot see what a
        crawling face melts away), then the replayed deviation."""
        if pp.program is None:
            return (True, True, True, np.inf)
        dev = pp.deviation.max_abs_mm
        return (False, dev > tol, any(f.code == "slow-face" for f in tf), dev)

    def programmed(item):
        piece, target = item
        piece = replace(piece, stock=stock_of.get(piece.id, piece.stock))
        pp, tf = _piece_plan(target, piece, job)
        first = standing(pp, tf)
        if getattr(piece.fit, "skewed", False) and any(first[:3]):
            # skewed rulings swing the towers further than parallel ones and can fan a face
            # to a crawl: where the program fails, or a face crawls, try parallel rulings
            why = (
                "could not be driven within travel" if first[0]
                else "left the tolerance once driven" if first[1]
                else "made a face crawl below the speeds the kerf law was measured at"
            )  # fmt: skip
            alt = _refit_parallel(target, piece, job, why)
            if alt is not None:
                pp2, tf2 = _piece_plan(target, alt[0], job)
                if standing(pp2, tf2) < first:
                    pp, tf = pp2, [alt[1], *tf2]
        _ = pp.deviation  # computed in the worker, not again in the parent
        return pp, tf

    n = len(items)
    progress("programs", 0, n)
    plans: list[PiecePlan] = []
    found: list[Finding] = []
    done = lambda i: progress("programs", i, n)  # noqa: E731
    for pp, tf in pmap(programmed, items, done=done, meanwhile=_import_writers):
        found.extend(tf)
        plans.append(pp)
    return plans, found


def _import_writers() -> None:
    """Import what :func:`write_plan` needs (matplotlib and ezdxf take about a second): done
    while the workers build the programs, and inherited by the report's picture workers."""
    import matplotlib.backends.backend_agg  # noqa: F401
    import matplotlib.figure  # noqa: F401
    import mpl_toolkits.axes_grid1.anchored_artists  # noqa: F401

    import wirecut.export.dxf  # noqa: F401
    import wirecut.export.report  # noqa: F401


def _piece_plan(target, piece, job: JobProfile):
    """(PiecePlan, findings) of one piece: its program (moved along the wire or the sweep when
    the towers would leave the travel, lifted on a riser when nothing else keeps the wire
    above the bed and inside the travel), the program's text and its in-memory replay."""
    from wirecut.gcode.replay import replay
    from wirecut.gcode.writer import normalize_program, write_gcode

    piece, program, report, findings = _placed_program(piece, job)
    samples = _piece_samples(target, piece)
    prediction = text = None
    if program is not None:
        program = normalize_program(program, job)  # exactly what the file will say
        prediction = replay(program, piece, job, samples)
        text = write_gcode(program, job)
    return PiecePlan(piece, program, report, prediction, samples, text), list(findings)


def _placed_program(piece, job: JobProfile):
    """(piece, program, report, findings): ``piece``'s program as built (moved along the wire
    or the sweep when the towers would leave the travel, lifted on a riser when nothing else
    keeps the wire above the bed and inside the travel), the piece moved where it went;
    ``program`` None when none can be driven."""
    from wirecut.toolpath.build import build_program

    program, report, findings = build_program(piece, job)
    if program is None:
        alt = _replaced_along_wire(piece, job)
        if alt is not None:
            piece, program, report, findings = alt
    if program is None:
        # the last resort: a riser under the blank, where the wire runs too low
        lifted = build_program(piece, job, riser=True)
        if lifted[0] is not None or any(f.code == "below-bed" for f in lifted[2]):
            program, report, findings = lifted  # the riser, or why none helps
    shift = float(getattr(report, "shift_x_mm", 0.0) or 0.0) if report is not None else 0.0
    lift = float(getattr(report, "riser_mm", 0.0) or 0.0) if report is not None else 0.0
    if shift != 0.0 or lift != 0.0:
        piece = _shifted(piece, np.array([shift, lift, 0.0]))
    return piece, program, report, findings


def _replaced_along_wire(piece, job: JobProfile, positions: int = 8):
    """(piece, program, report, findings) with the block moved along the wire (machine z) to
    where the program stays within travel, nearest to the centred placement first; None when
    no position between the two tower clearances works.

    Extending a ruling beyond the faces multiplies its tilt by the distance to the tower over
    the block's width (similar triangles), so a narrow block whose surface falls steeply along
    the wire overflows the travel at one tower; nearer to that tower it overflows less.
    """
    from wirecut.toolpath.build import build_program

    b = piece.block
    width = b.z_mm[1] - b.z_mm[0]
    lo = job.pieces.face_to_tower_mm
    hi = job.machine.span_mm - job.pieces.face_to_tower_mm - width
    if hi <= lo + 1e-6:
        return None
    starts = np.linspace(lo, hi, positions)
    for z0 in sorted(starts, key=lambda z: abs(z - b.z_mm[0])):
        dz = float(z0 - b.z_mm[0])
        if abs(dz) < 1e-6:
            continue
        moved = _shifted(piece, np.array([0.0, 0.0, dz]))
        program, report, findings = build_program(moved, job)
        if program is not None:
            note = Finding(
                "re-placed-along-wire",
                f"piece {piece.id}: block moved {dz:+.0f} mm along the wire (faces at "
                f"{moved.block.z_mm[0]:.0f} and {moved.block.z_mm[1]:.0f} mm) to keep the "
                "towers within travel",
                piece.id,
                Severity.INFO,
            )
            return moved, program, report, [note, *findings]
    return None


def _refit_parallel(target, piece, job: JobProfile, why: str):
    """(piece, finding) with the piece refitted with rulings perpendicular to the sweep (no
    skew), or None when no such fit exists; ``why`` says what the skewed rulings did."""
    from dataclasses import replace

    from wirecut.errors import JobError
    from wirecut.geometry.creases import break_lines
    from wirecut.pieces.region import plan_axes
    from wirecut.ruled.fit import fit_cut

    b = piece.block
    samples = check_samples(target, piece.part_to_machine, piece.region_plan)
    # the creases along the wire keep their knots, as in the split's fits
    sweep, _ = plan_axes(piece.frame, target.up)
    ridges = break_lines(target, sweep, 0.25 * job.pieces.min_width_mm)
    try:
        fit = fit_cut(
            samples, b.z_mm[0], b.z_mm[1], piece.part_to_machine, job.tolerance,
            x_range=b.x_mm, correspondence=False,
            knots_at=ridges + float(piece.part_to_machine[0, 3]) if len(ridges) else None,
        )  # fmt: skip
    except JobError:
        return None
    flat = replace(piece, fit=fit)
    note = Finding(
        "refit-parallel",
        f"piece {piece.id}: the skewed rulings of the best fit {why}; refitted with "
        "parallel rulings (fit deviation "
        f"{fit.report.max_abs_mm:.3f} mm instead of {piece.fit.report.max_abs_mm:.3f} mm)",
        piece.id,
        Severity.INFO,
    )
    return flat, note


def _shifted(piece, shift: np.ndarray):
    """The piece re-placed on the machine by ``shift`` (3,) mm (machine frame)."""
    from dataclasses import replace

    from wirecut.pieces.piece import Block
    from wirecut.ruled.model import RuledCut

    b = piece.block
    block = Block(
        (b.x_mm[0] + shift[0], b.x_mm[1] + shift[0]),
        (b.y_mm[0] + shift[1], b.y_mm[1] + shift[1]),
        (b.z_mm[0] + shift[2], b.z_mm[1] + shift[2]),
    )
    m = piece.part_to_machine.copy()
    m[:3, 3] += shift
    c = piece.fit.cut
    cut = RuledCut(
        c.left + shift[:2], c.right + shift[:2], c.z_left + shift[2], c.z_right + shift[2], m
    )
    samples = piece.fit.samples
    if samples is not None:
        move = np.eye(4)
        move[:3, 3] = shift
        samples = samples.transformed(move)
    fit = replace(piece.fit, cut=cut, samples=samples)
    return replace(piece, block=block, part_to_machine=m, fit=fit)


# --------------------------------------------------------------------------- plan.json


def _f(x) -> float:
    """A JSON-safe float rounded to 6 decimals (deterministic output)."""
    v = float(x)
    return round(v, 6) if np.isfinite(v) else None


def _toolpath_json(t) -> dict:
    """The toolpath numbers of a piece for plan.json (kerf, dwell, overshoot, lag, path)."""
    return {
        "kerf_left_mm": [_f(v) for v in t.kerf_left_mm],
        "kerf_right_mm": [_f(v) for v in t.kerf_right_mm],
        "dwell_time_s": _f(t.dwell_time_s),
        "corner_dwells": int(t.corner_dwells),
        "overshoot_mm": _f(t.overshoot_mm),
        "lag_at_cut_speed_mm": _f(t.lag_at_cut_speed_mm),
        "moves": int(t.n_moves),
        "path_length_left_mm": _f(t.path_length_left_mm),
        "path_length_right_mm": _f(t.path_length_right_mm),
        "speed_limited_moves": int(t.speed_limited_moves),
        "kerf_iterations": int(t.iterations),
        "shift_x_mm": _f(t.shift_x_mm),
    }


#: Share of the target's area outside every piece above which the plan says so.
_OUTSIDE_SHARE = 1e-3


def _outside_pieces(target, plans, fragments_mm2: float = 0.0) -> list[Finding]:
    """An info finding when some of the surface lies in no piece: faces standing vertical on
    the pieces' outlines (a step on a cut between two pieces belongs to neither; their
    blanks' end faces form it), or regions where nothing was fitted. The outline's fragments
    (``fragments_mm2`` of plan area, ``outline-fragments``) are said already."""
    total = float(getattr(target, "area_mm2", 0.0))
    if not plans or total <= 0:
        return []
    outside = total - sum(float(pp.deviation.area_mm2) for pp in plans)
    if outside - fragments_mm2 <= _OUTSIDE_SHARE * total:
        return []
    up = np.asarray(target.up, float)
    flat = np.abs(np.asarray(target.face_normals, float) @ up) < 1e-6
    vertical = float(np.asarray(target.face_areas)[flat].sum())
    return [
        Finding(
            "surface-outside-pieces",
            f"{outside / 1e6:.3f} m^2 ({outside / total * 100:.1f} % of the surface) lies in "
            f"no piece, {min(vertical, outside) / 1e6:.3f} m^2 of it in faces standing "
            "vertical: no wire cuts it; a vertical step on a cut between two pieces is formed "
            "by their blanks' end faces",
            severity=Severity.INFO,
        )
    ]


def plan_json(plan: Plan) -> dict:
    """plan.json as a dict, with every key of the interface contract."""
    job = plan.job
    target_area = float(plan.analysis.to_json()["target_area_mm2"])
    feasible_area = 0.0
    max_dev = 0.0
    pieces = []
    for pp in plan.pieces:
        piece = pp.piece
        r = pp.deviation
        feasible_area += r.feasible_area_fraction * r.area_mm2
        max_dev = max(max_dev, r.max_abs_mm)
        entry = {
            "id": piece.id,
            "gcode": f"gcode/{piece.id}.ngc" if pp.gcode is not None else None,
            "dxf": "pieces.dxf",
            "region_part_xy_mm": [[_f(x), _f(y)] for x, y in np.asarray(piece.region_plan)],
            "wire_direction_part": [_f(v) for v in piece.frame.wire_part],
            "part_to_machine": [[_f(v) for v in row] for row in piece.part_to_machine],
            "faces_z_mm": [_f(piece.block.z_mm[0]), _f(piece.block.z_mm[1])],
            "block_machine_mm": {
                "x": [_f(v) for v in piece.block.x_mm],
                "y": [_f(v) for v in piece.block.y_mm],
                "z": [_f(v) for v in piece.block.z_mm],
            },
            "blank_size_mm": [_f(v) for v in piece.block.size_mm],
            "riser_mm": _f(piece.block.y_mm[0] - job.machine.bed_y_mm),
            "stock": piece.stock,
            "max_deviation_mm": _f(r.max_abs_mm),
            "rms_deviation_mm": _f(r.rms_mm),
            "p95_deviation_mm": _f(r.p95_mm),
            "gouge_area_fraction": _f(r.gouge_area_fraction),
            "excess_area_fraction": _f(r.excess_area_fraction),
            "undercut_area_fraction": _f(r.undercut_area_fraction),
            "feasible_area_fraction": _f(r.feasible_area_fraction),
            "fit_max_deviation_mm": _f(piece.fit.report.max_abs_mm),
            "machine_time_s": _f(pp.program.machine_time_s) if pp.program is not None else None,
        }
        if pp.toolpath is not None:
            entry["toolpath"] = _toolpath_json(pp.toolpath)
        pieces.append(entry)
    alloc = plan.allocation
    foam = float(alloc.foam_volume_m3)
    kept = float(alloc.kept_volume_m3)
    summary = {
        "feasible_area_fraction": _f(min(1.0, feasible_area / target_area) if target_area else 0),
        "max_deviation_mm": _f(max_dev),
        "pieces": len(plan.pieces),
        "piece_lower_bound": int(plan.split.lower_bound),
        "blocks_used": int(alloc.blocks_used),
        "block_lower_bound": int(alloc.volume_lower_bound),
        "foam_volume_m3": _f(foam),
        "foam_mass_kg": _f(foam * job.foam.density_kg_m3),
        "kept_volume_m3": _f(kept),
        "waste_fraction": _f(1.0 - kept / foam if foam > 0 else 0.0),
        "machine_time_s": _f(
            sum(pp.program.machine_time_s for pp in plan.pieces if pp.program is not None)
        ),
    }
    m = job.machine
    return {
        "units": "mm",
        "tolerance_mm": job.tolerance.surface_mm,
        "policy": job.tolerance.policy.value,
        "machine": {
            "span_mm": m.span_mm,
            "travel_x_mm": list(m.travel_x_mm),
            "travel_y_mm": list(m.travel_y_mm),
            "dialect": m.dialect.value,
        },
        "summary": summary,
        "analysis": plan.analysis.to_json(),
        "pieces": pieces,
        "findings": [f.to_json() for f in plan.findings],
    }


def write_plan(plan: Plan, out_dir: Path, progress: Progress | None = None) -> dict:
    """Write every file of a plan into ``out_dir`` (a fresh folder); return plan.json's dict."""
    from wirecut.export.dxf import write_dxf
    from wirecut.export.rational import rational_mesh, write_rational_mesh

    progress = progress or _no_progress
    out_dir = Path(out_dir)
    (out_dir / "gcode").mkdir(parents=True, exist_ok=True)
    n = len(plan.pieces)
    for i, pp in enumerate(plan.pieces):
        progress("writing", i, n)
        if pp.gcode is not None:
            (out_dir / "gcode" / f"{pp.piece.id}.ngc").write_text(pp.gcode, encoding="ascii")
    data = plan_json(plan)

    def files() -> None:  # written while the report's pictures are drawn
        write_dxf([pp.piece for pp in plan.pieces], plan.allocation, out_dir / "pieces.dxf")
        mesh = rational_mesh([(pp.piece.fit, pp.piece.part_to_machine) for pp in plan.pieces])
        write_rational_mesh(mesh, out_dir / "rationalized.ply")
        (out_dir / "plan.json").write_text(
            json.dumps(data, indent=2, sort_keys=True) + "\n", encoding="utf-8"
        )

    from wirecut.export.report import write_report
    from wirecut.export.report_data import report_data

    source = str(getattr(plan.target, "source", "") or "")
    title = f"wirecut plan: {source}" if source not in ("", "arrays") else "wirecut plan"
    write_report(report_data(plan, data, title=title), out_dir, meanwhile=files)
    # deviation.png is the report's plan view (the same picture: wirecut.export.rational)
    try:
        shutil.copyfile(out_dir / "report_files" / "plan_view.png", out_dir / "deviation.png")
    except OSError as exc:
        raise OutputError(f"cannot write {out_dir / 'deviation.png'}: {exc}") from None
    progress("writing", n, n)
    return data
