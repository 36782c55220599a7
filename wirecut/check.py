"""The ``check`` job: intake and surface analysis of a mesh, without fitting or G-code.

Pure orchestration over :mod:`wirecut.geometry`; the CLI calls :func:`run_check` and then
:func:`write_check_outputs`, which writes the JSON and the pictures all-or-nothing.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from wirecut.config import JobProfile, Units
from wirecut.findings import Finding, Severity

__all__ = ["CheckResult", "run_check", "write_check_outputs", "check_json"]


@dataclass(frozen=True)
class CheckResult:
    """What ``check`` found.

    Attributes
    ----------
    mesh_path : Path
        The mesh file analysed.
    target : TargetSurface
        The target surface (part frame, mm).
    analysis : SurfaceAnalysis
        Curvature, classes, wire reach and undercut per vertex.
    job : JobProfile
        The profile used (its tolerance and policy set the reach).
    findings : tuple[Finding, ...]
        Intake notes and analysis findings.
    """

    mesh_path: Path
    target: object
    analysis: object
    job: JobProfile
    findings: tuple[Finding, ...]

    def to_json(self) -> dict:
        """The ``summary`` and ``analysis`` parts of plan.json (interface contract)."""
        return check_json(self)

    def table(self) -> list[str]:
        """Summary lines for the terminal (``-`` where a value is undefined)."""
        a = _defined(self.analysis.to_json())
        s = self.to_json()["summary"]
        k = a["gaussian_curvature_per_mm2"]
        r = a["wire_reach_mm"]
        creases = float(getattr(self.analysis, "crease_length_mm", 0.0))
        tol = self.job.tolerance
        return [
            f"wirecut check: {self.mesh_path.name}  (tolerance {tol.surface_mm:g} mm, "
            f"{tol.policy.value})",
            f"  target area            {a['target_area_mm2'] / 1e6:10.3f} m^2",
            f"  developable            {a['developable_area_fraction'] * 100:9.1f} %",
            f"  ruled (K < 0)          {a['ruled_area_fraction'] * 100:9.1f} %",
            f"  synclastic (K > 0)     {a['synclastic_area_fraction'] * 100:9.1f} %",
            f"  undercut               {a['undercut_area_fraction'] * 100:9.1f} %",
            f"  Gaussian curvature     median {k['median']:.3e}, p05 {k['p05']:.3e}, "
            f"p95 {k['p95']:.3e} 1/mm^2",
            f"  wire reach             p05 {r['p05']:.0f}, median {r['median']:.0f}, "
            f"p95 {r['p95']:.0f} mm",
            f"  feasible (reach >= {self.job.pieces.min_width_mm:g} mm, no undercut) "
            f"{s['feasible_area_fraction'] * 100:.1f} %",
            f"  roughness              {a['roughness_rms_mm']:9.3f} mm RMS "
            "(scatter about smooth local fits)",
        ] + (
            [
                f"  creases                {creases / 1000:9.2f} m "
                "(folds and steps: pieces end at those along the sweep)"
            ]
            if creases
            else []
        )


class _Undefined(float):
    """A NaN that prints as '-' in any numeric format (JSON null in the analysis)."""

    def __new__(cls):
        return super().__new__(cls, "nan")

    def __format__(self, spec: str) -> str:
        return "-"


def _defined(d):
    """The analysis dict with None replaced by an undefined number, recursively."""
    if isinstance(d, dict):
        return {k: _defined(v) for k, v in d.items()}
    return _Undefined() if d is None else d


def check_json(result: CheckResult) -> dict:
    """``{"units", "tolerance_mm", "summary", "analysis"}`` for ``check --json``."""
    a = result.analysis
    feasible = float(a.feasible_area_fraction(result.job.pieces.min_width_mm))
    return {
        "units": "mm",
        "tolerance_mm": result.job.tolerance.surface_mm,
        "policy": result.job.tolerance.policy.value,
        "summary": {"feasible_area_fraction": feasible},
        "analysis": a.to_json(),
    }


def run_check(mesh_path: Path, job: JobProfile, units: Units | None = None) -> CheckResult:
    """Load the mesh and analyse it; findings for low feasibility and undercut."""
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.geometry.mesh import load_target
    from wirecut.geometry.roughness import roughness_finding

    target, intake = load_target(mesh_path, job, units)
    analysis = analyse_surface(target, job)
    findings = list(intake)
    result = CheckResult(Path(mesh_path), target, analysis, job, tuple(findings))
    summary = check_json(result)
    feas = summary["summary"]["feasible_area_fraction"]
    und = summary["analysis"]["undercut_area_fraction"]
    if feas < 1.0 - 1e-9:
        findings.append(
            Finding(
                "short-wire-reach",
                f"{(1 - feas) * 100:.1f}% of the surface has a wire reach under "
                f"{job.pieces.min_width_mm:g} mm or is undercut",
                severity=Severity.ATTENTION,
            )
        )
    if und > 0.0:
        findings.append(
            Finding(
                "undercut",
                f"{und * 100:.1f}% of the surface cannot be reached by a wire from the waste side",
            )
        )
    rough = roughness_finding(analysis.curvature.roughness, job.tolerance.surface_mm)
    if rough is not None:
        findings.append(rough)
    return CheckResult(Path(mesh_path), target, analysis, job, tuple(findings))


def write_check_outputs(
    result: CheckResult, json_file: Path | None = None, out: Path | None = None
) -> None:
    """Write ``--json`` and the ``--out`` pictures; nothing is left half-written."""
    from wirecut.export.safe_output import atomic_write_text, output_dir

    if out is not None:
        from wirecut.export.maps import write_curvature_histogram, write_cuttability_map

        with output_dir(out) as tmp:
            # the histogram is drawn while a worker casts the map's rays (a large mesh)
            write_cuttability_map(
                result.target, result.analysis, tmp / "cuttability.png", result.job.tolerance,
                meanwhile=lambda: write_curvature_histogram(result.analysis, tmp / "curvature.png"),
            )  # fmt: skip
            (tmp / "check.json").write_text(
                json.dumps(result.to_json(), indent=2, sort_keys=True) + "\n", encoding="utf-8"
            )
    if json_file is not None:
        atomic_write_text(json_file, json.dumps(result.to_json(), indent=2, sort_keys=True) + "\n")
