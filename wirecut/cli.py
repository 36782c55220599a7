"""The ``wirecut`` command line: parse, call the core, write, set the exit code.

Exit codes: 0 = done and every piece within tolerance; 1 = done, with findings the user must
read; 2 = refused (bad input or impossible job): one line on stderr, no traceback, and no
output files left half-written.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

# numpy asks the kernel for transparent huge pages for every array of 4 MB and more; where the
# kernel compacts memory to find them on a fault (``defrag = madvise``, common), the many
# short-lived large arrays of an analysis stall on it. Measured on the project's machine: the
# 1M-triangle check steadier and 0.1-0.3 s faster without (docs/design-choices.md). numpy
# reads this when it is first imported, which is after this line; a user's setting wins.
os.environ.setdefault("NUMPY_MADVISE_HUGEPAGE", "0")

import typer

from wirecut.errors import WirecutError

__all__ = ["app", "main"]

app = typer.Typer(
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    help="Plan hot-wire cutting of EPS casting molds from a mesh.",
)

EXIT_OK, EXIT_FINDINGS, EXIT_REFUSED, EXIT_INTERNAL = 0, 1, 2, 3


class _Refused(Exception):
    """Internal: a one-line refusal already formatted."""


def _err(msg: str) -> None:
    sys.stderr.write(f"wirecut: {msg}\n")


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def _tolerance(value: str | None) -> float | None:
    """Parse --tolerance ourselves so every bad value gets the same one-line refusal."""
    if value is None:
        return None
    from wirecut.errors import ProfileError

    try:
        v = float(value)
    except ValueError:
        raise ProfileError(f"--tolerance must be a number in mm, got {value!r}") from None
    if not (v > 0.0 and v < float("inf")):
        raise ProfileError(f"--tolerance must be a finite number > 0 mm, got {value!r}")
    return v


def _job(job_path: Path | None, tolerance: str | None):
    from wirecut.config import load_job

    job = load_job(job_path)
    tol = _tolerance(tolerance)
    if tol is not None:
        job = job.with_tolerance(tol)
    return job


def _units(units: str | None):
    if units is None:
        return None
    from wirecut.config import Units
    from wirecut.errors import MeshError

    try:
        return Units(units)
    except ValueError:
        choices = ", ".join(u.value for u in Units)
        raise MeshError(f"--units {units!r} is not one of {choices}") from None


class _Console:
    """Terminal output of a command: progress on stderr, tables on stdout, quiet when asked."""

    def __init__(self, quiet: bool) -> None:
        self.quiet = quiet

    def progress(self, stage: str, done: int, total: int) -> None:
        if self.quiet or not sys.stderr.isatty() and total > 0 and done not in (total,):
            return
        width = 24
        filled = int(width * done / max(total, 1))
        bar = "#" * filled + "." * (width - filled)
        end = "\n" if done >= total else "\r"
        sys.stderr.write(f"  {stage:<10} [{bar}] {done}/{total}{end}")
        sys.stderr.flush()

    def out(self, text: str = "") -> None:
        if not self.quiet:
            typer.echo(text)


def _print_findings(console: _Console, findings) -> None:
    if not findings:
        return
    console.out("Findings:")
    for f in findings:
        where = f" [{f.piece}]" if f.piece else ""
        console.out(f"  {f.severity.value:<9} {f.code}{where}: {_one_line(f.message)}")


def _exit_for(findings) -> int:
    from wirecut.findings import needs_attention

    return EXIT_FINDINGS if needs_attention(list(findings)) else EXIT_OK


# --------------------------------------------------------------------------- check


@app.command()
def check(
    mesh: Path = typer.Argument(..., help="Target surface or solid: STL, OBJ, PLY, OFF or GLB."),
    job: Path | None = typer.Option(None, "--job", help="Job profile (TOML)."),
    tolerance: str | None = typer.Option(None, "--tolerance", help="Surface tolerance, mm."),
    json_file: Path | None = typer.Option(None, "--json", help="Write summary and analysis."),
    out: Path | None = typer.Option(None, "--out", help="Folder for the map and histogram."),
    units: str | None = typer.Option(None, "--units", help="Mesh units: m, cm, mm, in, ft."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
) -> None:
    """Fast surface analysis: curvature, cuttability map, feasible fraction; no G-code."""
    from wirecut.check import run_check, write_check_outputs
    from wirecut.export.safe_output import check_output_dir

    console = _Console(quiet)
    jobp = _job(job, tolerance)
    if out is not None:
        check_output_dir(out)
    if json_file is not None and json_file.is_dir():
        from wirecut.errors import OutputError

        raise OutputError(f"--json {json_file} is a folder, not a file")
    result = run_check(mesh, jobp, _units(units))
    write_check_outputs(result, json_file=json_file, out=out)
    for line in result.table():
        console.out(line)
    _print_findings(console, result.findings)
    raise typer.Exit(_exit_for(result.findings))


# --------------------------------------------------------------------------- plan


def _run_plan(
    mesh: Path,
    jobp,
    out: Path,
    units,
    console: _Console,
    json_stdout: bool,
    shown: Path | None = None,
) -> int:
    """Plan ``mesh`` into ``out``; ``shown`` is where the files end up when ``out`` is a
    temporary folder moved into place later (the demo's), for the closing message."""
    from wirecut.export.safe_output import check_output_dir, output_dir
    from wirecut.geometry.mesh import load_target
    from wirecut.plan import make_plan, write_plan

    check_output_dir(out)
    target, intake = load_target(mesh, jobp, units)
    plan = make_plan(target, jobp, intake_findings=intake, progress=console.progress)
    with output_dir(out) as tmp:
        data = write_plan(plan, tmp, progress=console.progress)
    if json_stdout:
        typer.echo(json.dumps(data["summary"], indent=2, sort_keys=True))
    for line in plan.table():
        console.out(line)
    _print_findings(console, plan.findings)
    console.out(f"Wrote {shown or out}/plan.json, report.html, gcode/, pieces.dxf")
    return _exit_for(plan.findings)


@app.command()
def plan(
    mesh: Path = typer.Argument(..., help="Target surface or solid: STL, OBJ, PLY, OFF or GLB."),
    job: Path | None = typer.Option(None, "--job", help="Job profile (TOML)."),
    out: Path = typer.Option(Path("wirecut_out"), "--out", help="Output folder."),
    tolerance: str | None = typer.Option(None, "--tolerance", help="Surface tolerance, mm."),
    units: str | None = typer.Option(None, "--units", help="Mesh units: m, cm, mm, in, ft."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
    json_stdout: bool = typer.Option(False, "--json", help="Print the summary as JSON."),
) -> None:
    """The whole job: analysis, fit, pieces, cut paths, G-code, DXF, report, plan.json."""
    console = _Console(quiet or json_stdout)
    code = _run_plan(mesh, _job(job, tolerance), out, _units(units), console, json_stdout)
    raise typer.Exit(code)


@app.command()
def demo(
    out: Path = typer.Option(Path("wirecut_demo"), "--out", help="Output folder."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
) -> None:
    """Plan the bundled demo scenario with its bundled job profile."""
    from wirecut.demo import run_demo

    console = _Console(quiet)
    raise typer.Exit(run_demo(out, console, _run_plan))


# --------------------------------------------------------------------------- simulate


@app.command()
def simulate(
    program: Path = typer.Argument(..., help="A G-code program written by wirecut."),
    job: Path | None = typer.Option(None, "--job", help="Job profile (TOML)."),
    against: Path | None = typer.Option(None, "--against", help="Target mesh to compare."),
    piece: str | None = typer.Option(None, "--piece", help="Piece id in the plan, e.g. P01."),
    plan_json: Path | None = typer.Option(None, "--plan", help="The plan.json of the program."),
    tolerance: str | None = typer.Option(None, "--tolerance", help="Surface tolerance, mm."),
    units: str | None = typer.Option(None, "--units", help="Mesh units: m, cm, mm, in, ft."),
    json_file: Path | None = typer.Option(None, "--json", help="Write the replay summary."),
    quiet: bool = typer.Option(False, "--quiet", help="Print nothing but errors."),
) -> None:
    """Replay a G-code program: wire positions, machine time, the cut surface, deviation."""
    from wirecut.simulate import run_simulate

    console = _Console(quiet)
    jobp = _job(job, tolerance)
    result = run_simulate(program, jobp, against, piece, plan_json, _units(units))
    if json_file is not None:
        from wirecut.export.safe_output import atomic_write_text

        atomic_write_text(json_file, json.dumps(result.to_json(), indent=2, sort_keys=True) + "\n")
    for line in result.table():
        console.out(line)
    _print_findings(console, result.findings)
    raise typer.Exit(_exit_for(result.findings))


# --------------------------------------------------------------------------- calibrate


@app.command()
def calibrate(
    csv: Path = typer.Argument(..., help="CSV of test cuts (docs/calibration.md)."),
    job: Path | None = typer.Option(None, "--job", help="Job profile (TOML)."),
    plot: Path | None = typer.Option(None, "--plot", help="Write a PNG of the fit."),
    quiet: bool = typer.Option(False, "--quiet", help="Print only the TOML lines."),
) -> None:
    """Fit the kerf and lag constants of a profile from a shop's own test cuts."""
    from wirecut.toolpath.calibration import calibrate as fit_constants
    from wirecut.toolpath.calibration import read_test_cuts

    jobp = _job(job, None)
    result = fit_constants(read_test_cuts(csv), jobp)
    if plot is not None:
        from wirecut.export.safe_output import check_output_dir

        if plot.is_dir():
            from wirecut.errors import OutputError

            raise OutputError(f"--plot {plot} is a folder, not a file")
        check_output_dir(plot.parent if str(plot.parent) else Path("."))
        result.write_plot(plot)
    for line in result.toml_lines():
        typer.echo(line)
    if not quiet:
        _print_findings(_Console(False), result.findings)
    raise typer.Exit(_exit_for(result.findings))


def main(argv: list[str] | None = None) -> int:
    """Console-script entry point: never a traceback for bad input."""
    try:  # typer >= 0.2x vendors click; older releases depend on it
        from typer._click import exceptions as click_exc
    except ImportError:  # pragma: no cover - depends on the installed typer
        from click import exceptions as click_exc

    try:
        rv = app(args=argv, standalone_mode=False, prog_name="wirecut")
        code = rv if isinstance(rv, int) else EXIT_OK
    except typer.Exit as exc:
        code = exc.exit_code
    except click_exc.UsageError as exc:
        _err(_one_line(exc.format_message()))
        code = EXIT_REFUSED
    except click_exc.ClickException as exc:
        _err(_one_line(exc.format_message()))
        code = EXIT_REFUSED
    except typer.Abort:
        _err("interrupted; earlier output left as it was")
        code = 130
    except KeyboardInterrupt:
        _err("interrupted; earlier output left as it was")
        code = 130
    except WirecutError as exc:
        _err(_one_line(str(exc)))
        code = EXIT_REFUSED
    except MemoryError:
        _err(
            "out of memory: decimate the mesh (e.g. trimesh simplify_quadric_decimation) and retry"
        )
        code = EXIT_REFUSED
    except Exception as exc:  # a defect of wirecut, not of the input: still one line
        if os.environ.get("WIRECUT_DEBUG"):
            raise
        _err(f"internal error ({exc.__class__.__name__}: {_one_line(exc)}); set WIRECUT_DEBUG=1")
        code = EXIT_INTERNAL
    if argv is None:
        sys.exit(code)
    return code


if __name__ == "__main__":
    main()
