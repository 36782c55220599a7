"""The ``simulate`` job: replay a written G-code program, optionally against its target.

Reads the program with the project's own reader, reconstructs the wire over time and, when a
target mesh and the plan it belongs to are given, measures the surface the wire actually cuts
against that target (kerf by each face's speed, wire lag included).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from wirecut.config import JobProfile, Units
from wirecut.errors import GcodeError, JobError
from wirecut.findings import Finding

__all__ = ["SimulateResult", "run_simulate", "piece_from_plan_entry"]


@dataclass(frozen=True)
class SimulateResult:
    """What a replay measured.

    Attributes
    ----------
    program_path : Path
        The program replayed.
    program : CutProgram
        The program as read back.
    replay : DeviationReport or None
        Deviation of the replayed cut from the target, when a target was given.
    findings : tuple[Finding, ...]
        Out of tolerance, outside travel, ...
    """

    program_path: Path
    program: object
    replay: object
    tolerance_mm: float
    findings: tuple[Finding, ...]

    def to_json(self) -> dict:
        prog = self.program
        pos = prog.positions()
        out = {
            "program": str(self.program_path.name),
            "moves": int(len(prog.ops)),
            "machine_time_s": round(float(prog.machine_time_s), 6),
            "dwell_time_s": round(float(prog.dwell_time_s), 6),
            "towers_min_mm": [round(float(v), 6) for v in pos.min(axis=0)],
            "towers_max_mm": [round(float(v), 6) for v in pos.max(axis=0)],
            "tolerance_mm": self.tolerance_mm,
            "findings": [f.to_json() for f in self.findings],
        }
        if self.replay is not None:
            r = self.replay
            out["deviation"] = {
                "max_deviation_mm": round(float(r.max_abs_mm), 6),
                "rms_deviation_mm": round(float(r.rms_mm), 6),
                "p95_deviation_mm": round(float(r.p95_mm), 6),
                "gouge_area_fraction": round(float(r.gouge_area_fraction), 6),
                "feasible_area_fraction": round(float(r.feasible_area_fraction), 6),
            }
        return out

    def table(self) -> list[str]:
        j = self.to_json()
        lines = [
            f"wirecut simulate: {j['program']}",
            f"  moves            {j['moves']}",
            f"  machine time     {j['machine_time_s'] / 60:.2f} min "
            f"(dwell {j['dwell_time_s']:.1f} s)",
            "  towers X Y U V   min " + " ".join(f"{v:.1f}" for v in j["towers_min_mm"]),
            "                   max " + " ".join(f"{v:.1f}" for v in j["towers_max_mm"]),
        ]
        if "deviation" in j:
            d = j["deviation"]
            lines += [
                f"  max deviation    {d['max_deviation_mm']:.3f} mm "
                f"(tolerance {self.tolerance_mm:g} mm)",
                f"  rms / p95        {d['rms_deviation_mm']:.3f} / {d['p95_deviation_mm']:.3f} mm",
                f"  within tolerance {d['feasible_area_fraction'] * 100:.1f} % of the area",
            ]
        return lines


def piece_from_plan_entry(entry: dict):
    """Block, part_to_machine (4, 4) and region (k, 2) of a plan.json piece entry."""
    from wirecut.pieces.piece import Block

    try:
        b = entry["block_machine_mm"]
        block = Block(tuple(b["x"]), tuple(b["y"]), tuple(b["z"]))
        m = np.asarray(entry["part_to_machine"], float).reshape(4, 4)
        region = np.asarray(entry["region_part_xy_mm"], float)
    except (KeyError, TypeError, ValueError) as exc:
        raise JobError(f"plan.json piece {entry.get('id')!r} lacks a usable {exc}") from None
    return block, m, region


def run_simulate(
    program_path: Path,
    job: JobProfile,
    against: Path | None = None,
    piece_id: str | None = None,
    plan_path: Path | None = None,
    units: Units | None = None,
) -> SimulateResult:
    """Read and replay a program; compare with the target when ``against`` is given."""
    from wirecut.gcode.reader import read_gcode

    p = Path(program_path)
    if not p.is_file():
        raise GcodeError(f"program {p} does not exist or is not a file")
    try:
        text = p.read_text(encoding="ascii")
    except (OSError, UnicodeDecodeError):
        raise GcodeError(f"program {p} cannot be read as ASCII G-code") from None
    program = read_gcode(text, job, piece_id=piece_id or p.stem)
    findings: list[Finding] = []
    replay_result = None
    if against is not None or plan_path is not None:
        if against is None or plan_path is None:
            raise JobError("--against needs --plan (and --piece), and --plan needs --against")
        replay_result = _against(program, job, against, piece_id or p.stem, plan_path, units)
        r = replay_result
        tol = job.tolerance.surface_mm
        if r.max_abs_mm > tol:
            findings.append(
                Finding(
                    "out-of-tolerance",
                    f"the replayed cut deviates up to {r.max_abs_mm:.3f} mm (tolerance {tol:g} mm)",
                    piece=piece_id,
                )
            )
    return SimulateResult(p, program, replay_result, job.tolerance.surface_mm, tuple(findings))


def _against(program, job, mesh: Path, piece_id: str, plan_path: Path, units):
    from wirecut.gcode.replay import replay
    from wirecut.geometry.mesh import load_target
    from wirecut.plan import check_samples

    try:
        data = json.loads(Path(plan_path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise JobError(f"plan {plan_path} does not exist") from None
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        msg = f"plan {plan_path} is not a readable plan.json ({exc.__class__.__name__})"
        raise JobError(msg) from None
    entries = {e.get("id"): e for e in data.get("pieces", []) if isinstance(e, dict)}
    if piece_id not in entries:
        known = ", ".join(sorted(str(k) for k in entries)) or "none"
        raise JobError(f"piece {piece_id!r} is not in {plan_path} (pieces: {known})")
    block, m, region = piece_from_plan_entry(entries[piece_id])
    target, _ = load_target(mesh, job, units)
    samples = check_samples(target, m, region)

    from wirecut.plan import replay_report

    return replay_report(replay(program, block, job, samples), samples, job.tolerance.surface_mm)
