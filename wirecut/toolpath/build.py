"""Build one piece's machine program from its ruled cut: profiles, kerf, lag, timing, towers.

Steps (docs/methods-toolpath.md):

1. Face profiles. The piece's RuledCut is taken at the block's two end faces (``at_plane``),
   ruling by ruling, so both faces share one parameter. A segment longer than
   ``max_segment_mm`` is split by linear interpolation on both faces at once: the bilinear
   strip between two rulings is unchanged (a G1 that moves all four axes linearly in time
   sweeps exactly that strip), the path is never coarser than the fit assumed, and kerf and
   lag are resolved along long segments.
2. Kerf offset toward the waste side (:mod:`wirecut.toolpath.kerf`), with the kerf of each
   move from that face's speed, the speeds from the timing (:mod:`wirecut.toolpath.timing`)
   of the offset path: a fixed point, iterated until no offset vertex moves by more than
   ``1e-4`` mm.
3. Lag (:mod:`wirecut.toolpath.lag`): dwells at sharp corners, speed caps on tight curves,
   and an exit overshoot of at least the lag.
4. The path: RAPID to an approach point outside the block (x min - clearance, top +
   clearance); HEAT_ON; FEED down to the entry height outside the block; FEED along the sweep
   into the profile's first point; the profile; FEED along the sweep past x max by the lag
   plus the clearance; FEED up above the top; HEAT_OFF; RAPID back over the top.
5. Towers (:mod:`wirecut.toolpath.towers`): every position extended to the tower planes and
   checked against the travel and the bed; re-placed along the sweep when that fixes it (and,
   when the caller allows it, lifted on a foam riser when the wire runs too low), refused
   (program None, finding ``outside-travel`` or ``below-bed``) otherwise.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import JobError
from wirecut.findings import Finding, Severity
from wirecut.toolpath.kerf import kerf_floor_speed_mm_s, kerf_mm, offset_polyline, segment_offsets
from wirecut.toolpath.lag import block_lag_gain_s, plan_lag
from wirecut.toolpath.program import CutProgram, Op
from wirecut.toolpath.timing import time_moves
from wirecut.toolpath.towers import moved, tower_positions, travel_check

if TYPE_CHECKING:
    from wirecut.pieces.piece import Piece

__all__ = ["ToolpathReport", "resample_profiles", "build_program"]

_TOL_CHANGE_MM = 1e-4


@dataclass(frozen=True)
class ToolpathReport:
    """What the toolpath stage did for one piece.

    Attributes
    ----------
    piece_id : str
        The piece.
    kerf_left_mm, kerf_right_mm : (2,) float, mm
        Least and greatest kerf on the cut moves at the left and right face.
    dwell_time_s : float, s
        Dwell added at corners for the lag.
    corner_dwells : int
        Number of corners with a dwell.
    overshoot_mm : float, mm
        How far the lead-out runs past the block's x max (lag at cut speed + clearance).
    lag_at_cut_speed_mm : float, mm
        Largest lag inside the block at the cut speed.
    n_moves : int
        Number of operations in the program.
    path_length_left_mm, path_length_right_mm : float, mm
        Length of the heated path at each face.
    machine_time_s : float, s
        Feeds and dwells of the program.
    speed_limited_moves : int
        Moves slowed below the cut speed by an axis limit or a lag speed cap.
    iterations : int
        Kerf/timing fixed-point iterations used.
    last_change_mm : float, mm
        Largest offset change in the last iteration.
    shift_x_mm : float, mm, machine frame
        Shift along the sweep applied to keep the towers in travel (the integrator must add it
        to the piece's placement: ``part_to_machine[0, 3] += shift_x_mm``).
    riser_mm : float, mm
        Height of the foam riser the blank stands on (0 for none): every position and the
        blank are lifted by it (the integrator adds it to ``part_to_machine[1, 3]``).
    left_offset, right_offset : (k, 2) float, mm, machine frame
        The wire centre's path at each face along the cut (kerf offset applied, shift applied).
    left_profile, right_profile : (k, 2) float, mm, machine frame
        The target profiles (resampled, shift applied) the offsets belong to.
    towers : (m + 1, 4) float, mm, machine frame
        Start position and the position after each operation.
    left_speed_mm_s, right_speed_mm_s : (j,) float, mm/s
        Face speed on each feed, in program order.
    clamped_corners : int
        Kerf joins clamped by the mitre limit.
    """

    piece_id: str
    kerf_left_mm: np.ndarray
    kerf_right_mm: np.ndarray
    dwell_time_s: float
    corner_dwells: int
    overshoot_mm: float
    lag_at_cut_speed_mm: float
    n_moves: int
    path_length_left_mm: float
    path_length_right_mm: float
    machine_time_s: float
    speed_limited_moves: int
    iterations: int
    last_change_mm: float
    shift_x_mm: float
    riser_mm: float
    left_offset: np.ndarray
    right_offset: np.ndarray
    left_profile: np.ndarray
    right_profile: np.ndarray
    towers: np.ndarray
    left_speed_mm_s: np.ndarray
    right_speed_mm_s: np.ndarray
    clamped_corners: int


def resample_profiles(
    left: np.ndarray, right: np.ndarray, max_segment_mm: float
) -> tuple[np.ndarray, np.ndarray]:
    """Split segments longer than ``max_segment_mm`` on either face, on both faces at once.

    Parameters
    ----------
    left, right : (k, 2) float, mm, machine frame
        Synchronized face profiles (one point per ruling).
    max_segment_mm : float, mm
        Longest segment allowed on either face.

    Returns
    -------
    left, right : (k', 2) float, mm
        Every original ruling kept, new rulings inserted by linear interpolation, rulings of
        zero length on both faces dropped.
    """
    l = np.asarray(left, float)
    r = np.asarray(right, float)
    seg = np.maximum(
        np.linalg.norm(np.diff(l, axis=0), axis=1), np.linalg.norm(np.diff(r, axis=0), axis=1)
    )
    keep = np.concatenate([[True], seg > 1e-9])
    l, r, seg = l[keep], r[keep], seg[seg > 1e-9]
    n_sub = np.maximum(1, np.ceil(seg / max_segment_mm).astype(int))
    s = np.concatenate([np.arange(n) / n for n in n_sub] + [np.array([0.0])])
    i = np.concatenate([np.full(n, j) for j, n in enumerate(n_sub)] + [np.array([len(l) - 1])])
    i1 = np.minimum(i + 1, len(l) - 1)
    return (1 - s)[:, None] * l[i] + s[:, None] * l[i1], (1 - s)[:, None] * r[i] + s[:, None] * r[
        i1
    ]


def _wire_dirs(left: np.ndarray, right: np.ndarray, width_mm: float) -> np.ndarray:
    """Wire direction (k - 1, 3) of each strip: mean of its two end rulings (left -> right)."""
    d = np.column_stack([right - left, np.full(len(left), width_mm)])
    return 0.5 * (d[:-1] + d[1:])


#: The least height above the blank the wire starts and ends at, where the home clearance
#: would take it above the y travel, mm.
_LEAST_RISE_MM = 5.0


def _assemble(off_l, off_r, block, job, overshoot_mm):
    """Face positions of the heated path: approach, entry, profile, exit, rise.

    The wire starts and ends beside the blank, ``home_clearance_mm`` above its top; where
    that would leave the y travel, as low as the travel's top, but never less than
    ``_LEAST_RISE_MM`` above the blank (the wire stands beside the blank there, a clearance
    away along the sweep, so the height only keeps it clear of the top when it parks)."""
    c = job.machine.home_clearance_mm
    x_entry = min(block.x_mm[0], off_l[0, 0], off_r[0, 0]) - c
    x_exit = max(block.x_mm[1], off_l[-1, 0], off_r[-1, 0]) + overshoot_mm
    highest = max(block.y_mm[1], off_l[:, 1].max(), off_r[:, 1].max())
    y_top = highest + c
    ceiling = float(job.machine.travel_y_mm[1])
    if y_top > ceiling:
        y_top = max(ceiling, highest + min(_LEAST_RISE_MM, c))

    def path(off):
        head = np.array([[x_entry, y_top], [x_entry, off[0, 1]]])
        tail = np.array([[x_exit, off[-1, 1]], [x_exit, y_top]])
        return np.vstack([head, off, tail])

    return path(off_l), path(off_r), y_top


def _in_foam(points: np.ndarray, block, reach_mm: float) -> np.ndarray:
    """Vertices (k,) bool within ``reach_mm`` of the block: the bowed wire may still be in foam."""
    eps = 1e-6 + reach_mm
    return (
        (points[:, 0] >= block.x_mm[0] - eps)
        & (points[:, 0] <= block.x_mm[1] + eps)
        & (points[:, 1] <= block.y_mm[1] + eps)
    )


def build_program(
    piece: Piece,
    job: JobProfile,
    *,
    max_segment_mm: float = 10.0,
    lag_share: float | None = None,
    max_iterations: int = 40,
    riser: bool = False,
) -> tuple[CutProgram | None, ToolpathReport, list[Finding]]:
    """The machine program of one piece.

    Parameters
    ----------
    piece : Piece
        Uses ``id``, ``block`` and ``fit.cut`` (a RuledCut in the piece's machine frame).
    job : JobProfile
        Machine span, travel, axis speed, clearance, heat; wire speed, kerf and lag; tolerance.
    max_segment_mm : float, mm
        Longest move along the cut at either face.
    lag_share : float, optional
        Share of ``tolerance.surface_mm`` the lag may use at corners and on curves; default
        the profile's ``tolerance.lag_share``.
    max_iterations : int
        Cap on the kerf/timing fixed-point iterations.
    riser : bool
        Where the wire would run below the Y/V travel or below the bed at a face, stand the
        blank on a foam riser high enough (finding ``on-riser``) instead of refusing.

    Returns
    -------
    program : CutProgram or None
        None when a position cannot be brought inside the travel.
    report : ToolpathReport
    findings : list of Finding
        ``re-placed-in-travel`` (info), ``on-riser`` (info), ``outside-travel``,
        ``below-bed``, ``kerf-join-clamped``,
        ``kerf-not-converged``.
    """
    cut = piece.fit.cut
    block = piece.block
    machine, wire = job.machine, job.wire
    z_l, z_r = float(block.z_mm[0]), float(block.z_mm[1])
    if not (0.0 <= z_l < z_r <= machine.span_mm):
        raise JobError(
            f"piece {piece.id}: block faces z = [{z_l:g}, {z_r:g}] mm must lie inside the span "
            f"[0, {machine.span_mm:g}] mm"
        )
    if max_segment_mm <= 0:
        raise JobError(f"max_segment_mm = {max_segment_mm!r} must be > 0")
    prof_l, prof_r = resample_profiles(cut.at_plane(z_l), cut.at_plane(z_r), max_segment_mm)
    if not (np.isfinite(prof_l).all() and np.isfinite(prof_r).all()) or len(prof_l) < 2:
        raise JobError(f"piece {piece.id}: the cut's face profiles are empty or not finite")
    width = z_r - z_l
    gain = block_lag_gain_s(z_l, z_r, wire, machine.span_mm)
    lag_cut = gain * wire.cut_speed_mm_s
    overshoot = lag_cut + machine.home_clearance_mm
    share = job.tolerance.lag_share if lag_share is None else lag_share
    allowed = share * job.tolerance.surface_mm
    # the section where the lag is largest, as a fraction between the faces
    r1 = width * (machine.span_mm - 0.5 * (z_l + z_r)) / machine.span_mm
    t_mid = r1 / width
    k = len(prof_l)
    cut_moves = slice(2, k + 1)  # moves 0 descent, 1 lead-in, 2..k profile, k+1 out, k+2 up

    kl = np.full(k - 1, float(kerf_mm(wire.cut_speed_mm_s, wire)))
    kr = kl.copy()
    dirs = _wire_dirs(prof_l, prof_r, width)
    # the lag's speed caps belong to the target path (its curvature), not to the offset one:
    # taken from the offset, a clamped join's zig-zag would cap the speed, widen the kerf,
    # and feed back into a worse offset
    t_l, t_r, _ = _assemble(prof_l, prof_r, block, job, overshoot)
    t_mid_path = (1 - t_mid) * t_l + t_mid * t_r
    caps = plan_lag(
        t_mid_path,
        np.full(len(t_mid_path) - 1, wire.cut_speed_mm_s),
        _in_foam(t_mid_path, block, lag_cut + float(kl.max())),
        gain,
        allowed,
        wire.lag_relax_s,
    ).speed_cap_mm_s
    prev = None
    change = np.inf
    relax = 1.0
    iterations = 0
    for iterations in range(1, max_iterations + 1):  # noqa: B007 - count reported
        off_l, cl_l = offset_polyline(prof_l, segment_offsets(prof_l, dirs, kl), +1.0)
        off_r, cl_r = offset_polyline(prof_r, segment_offsets(prof_r, dirs, kr), +1.0)
        pts_l, pts_r, y_top = _assemble(off_l, off_r, block, job, overshoot)
        towers = tower_positions(pts_l, pts_r, z_l, z_r, machine.span_mm)
        mid = (1 - t_mid) * pts_l + t_mid * pts_r
        foam = _in_foam(mid, block, lag_cut + float(kl.max()))
        timing = time_moves(
            pts_l, pts_r, towers, wire.cut_speed_mm_s, machine.max_axis_speed_mm_s, caps
        )
        # full steps while the offset settles; half steps once it swings (the kerf widens
        # where a face slows, and the wider offset shortens that face's concave moves)
        kl = kl + relax * (kerf_mm(timing.left_speed_mm_s[cut_moves], wire) - kl)
        kr = kr + relax * (kerf_mm(timing.right_speed_mm_s[cut_moves], wire) - kr)
        dirs = _wire_dirs(off_l, off_r, width)
        cur = np.vstack([off_l, off_r])
        if prev is not None:
            last = change
            change = float(np.abs(cur - prev).max())
            if change < _TOL_CHANGE_MM:
                break
            if change > last:
                relax = 0.5
        prev = cur
    v_mid = np.linalg.norm(np.diff(mid, axis=0), axis=1) / np.where(
        timing.duration_s > 0, timing.duration_s, 1.0
    )
    lag_plan = plan_lag(mid, v_mid, foam, gain, allowed, wire.lag_relax_s)

    findings: list[Finding] = []
    check = travel_check(towers, machine, (z_l, z_r), riser=riser)
    shift = lift = 0.0
    program: CutProgram | None = None
    if check.fixable:
        shift, lift = check.shift_x_mm, check.riser_mm
        if shift != 0.0:
            findings.append(
                Finding(
                    "re-placed-in-travel",
                    f"piece {piece.id} shifted {shift:+.1f} mm along the sweep to keep the "
                    f"towers within travel (axis {check.axis} was {check.overshoot_mm:.1f} mm "
                    "outside)",
                    piece.id,
                    Severity.INFO,
                )
            )
        if lift != 0.0:
            sx, sz = block.size_mm[0], block.size_mm[1]
            findings.append(
                Finding(
                    "on-riser",
                    f"piece {piece.id}: the blank stands on a riser {lift:.0f} mm high "
                    f"({sx:.0f} x {sz:.0f} mm, under the whole blank), because the wire runs "
                    "below the blank's bottom beside the piece; the wire cuts into the riser, "
                    "so make it of foam, never of wood or metal",
                    piece.id,
                    Severity.INFO,
                )
            )
        towers = moved(towers, shift, lift)
    elif check.below_bed_mm > 0.0 and (not check.axis or check.axis in "YV"):
        higher = (
            f"; a riser high enough ({check.riser_mm:.0f} mm) would lift the towers above the "
            "Y/V travel"
            if check.riser_mm
            else ""
        )
        findings.append(
            Finding(
                "below-bed",
                f"piece {piece.id}: the wire would pass {check.below_bed_mm:.1f} mm below the "
                f"bed at a face of the blank and cut into the table{higher}; no program written",
                piece.id,
            )
        )
    elif not check.ok:
        findings.append(
            Finding(
                "outside-travel",
                f"piece {piece.id}: axis {check.axis} would run {check.overshoot_mm:.1f} mm "
                "outside the machine travel; no program written",
                piece.id,
            )
        )
    clamped = cl_l + cl_r
    if clamped:
        findings.append(
            Finding(
                "kerf-join-clamped",
                f"piece {piece.id}: {clamped} kerf join(s) at near-reversals clamped by the "
                "mitre limit; the part may be gouged there",
                piece.id,
            )
        )
    slow = kerf_floor_speed_mm_s(wire)
    v_faces = np.concatenate(
        [timing.left_speed_mm_s[cut_moves], timing.right_speed_mm_s[cut_moves]]
    )
    n_slow = int(np.count_nonzero(v_faces < slow))
    if n_slow:
        findings.append(
            Finding(
                "slow-face",
                f"piece {piece.id}: on {n_slow} move(s) a block face moves slower than "
                f"{slow:.2g} mm/s (down to {float(v_faces.min()):.2g} mm/s), below the speeds "
                "the kerf law was measured at; the kerf there may be wider than planned",
                piece.id,
            )
        )
    if change >= _TOL_CHANGE_MM and iterations >= max_iterations:
        findings.append(
            Finding(
                "kerf-not-converged",
                f"piece {piece.id}: kerf offset still moved {change:.2g} mm after "
                f"{iterations} iterations",
                piece.id,
            )
        )

    # operations: RAPID approach, HEAT_ON, feeds (dwells after corners), HEAT_OFF, RAPID back
    ops = [Op.RAPID, Op.HEAT_ON]
    pos = [towers[0], towers[0]]
    dur = [0.0, 0.0]
    for j in range(1, len(towers)):
        ops.append(Op.FEED)
        pos.append(towers[j])
        dur.append(float(timing.duration_s[j - 1]))
        if lag_plan.dwell_s[j] > 0:
            ops.append(Op.DWELL)
            pos.append(towers[j])
            dur.append(float(lag_plan.dwell_s[j]))
    ops += [Op.HEAT_OFF, Op.RAPID]
    pos += [towers[-1], towers[0]]
    dur += [0.0, 0.0]
    pos_arr = np.asarray(pos)
    pts_l, pts_r = moved(pts_l, shift, lift), moved(pts_r, shift, lift)
    off_l, off_r = moved(off_l, shift, lift), moved(off_r, shift, lift)
    kerf_l = kerf_mm(timing.left_speed_mm_s[cut_moves], wire)
    kerf_r = kerf_mm(timing.right_speed_mm_s[cut_moves], wire)
    if check.ok or check.fixable:
        header = (
            ("stock", str(piece.stock or "none on hand takes this blank, see the plan findings")),
            ("block x mm", f"{block.x_mm[0] + shift:.3f} {block.x_mm[1] + shift:.3f}"),
            ("block y mm", f"{block.y_mm[0] + lift:.3f} {block.y_mm[1] + lift:.3f}"),
            ("block faces z mm", f"{z_l:.3f} {z_r:.3f}"),
            ("faces from left and right tower mm", f"{z_l:.3f} {machine.span_mm - z_r:.3f}"),
            ("blank size mm", " x ".join(f"{v:.1f}" for v in block.size_mm)),
            ("kerf left mm", f"{kerf_l.min():.3f}-{kerf_l.max():.3f}"),
            ("kerf right mm", f"{kerf_r.min():.3f}-{kerf_r.max():.3f}"),
            ("shift x mm", f"{shift:.3f}"),
        ) + (
            (("riser under the blank mm", f"{lift:.0f} (foam only: the wire cuts into it)"),)
            if lift
            else ()
        )
        program = CutProgram(
            piece.id, np.asarray(ops), pos_arr, np.asarray(dur), towers[0],
            machine.heat_power, header,
        )  # fmt: skip
    total_dur = np.asarray(dur)
    report = ToolpathReport(
        piece_id=piece.id,
        kerf_left_mm=np.array([kerf_l.min(), kerf_l.max()]),
        kerf_right_mm=np.array([kerf_r.min(), kerf_r.max()]),
        dwell_time_s=float(lag_plan.dwell_s.sum()),
        corner_dwells=int(np.count_nonzero(lag_plan.dwell_s > 0)),
        overshoot_mm=float(pts_l[-1, 0] - (block.x_mm[1] + shift)),
        lag_at_cut_speed_mm=float(lag_cut),
        n_moves=len(ops),
        path_length_left_mm=float(np.linalg.norm(np.diff(pts_l, axis=0), axis=1).sum()),
        path_length_right_mm=float(np.linalg.norm(np.diff(pts_r, axis=0), axis=1).sum()),
        machine_time_s=float(total_dur.sum()),
        speed_limited_moves=timing.limited_count,
        iterations=iterations,
        last_change_mm=float(change) if np.isfinite(change) else 0.0,
        shift_x_mm=float(shift),
        riser_mm=float(lift),
        left_offset=off_l,
        right_offset=off_r,
        left_profile=moved(prof_l, shift, lift),
        right_profile=moved(prof_r, shift, lift),
        towers=np.vstack([towers[:1], pos_arr]),
        left_speed_mm_s=timing.left_speed_mm_s,
        right_speed_mm_s=timing.right_speed_mm_s,
        clamped_corners=clamped,
    )
    return program, report, findings
