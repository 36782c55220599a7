"""The bundled demo scenario: every demo part planned with the demo's job profile."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from wirecut.errors import JobError

__all__ = ["demo_dir", "demo_parts", "run_demo"]

_MESH_SUFFIXES = (".stl", ".ply", ".obj", ".off", ".glb")


def demo_dir() -> Path:
    """Folder of the demo meshes and job profile (installed package data or the source tree)."""
    try:
        p = Path(str(resources.files("wirecut.demo_parts")))
        if (p / "demo_job.toml").is_file():
            return p
    except ModuleNotFoundError:
        pass
    src = Path(__file__).resolve().parent.parent / "demo_parts"
    if (src / "demo_job.toml").is_file():
        return src
    raise JobError("the demo scenario is not installed (demo_parts/demo_job.toml not found)")


def demo_parts() -> list[Path]:
    """The demo meshes, sorted by name."""
    d = demo_dir()
    return sorted(p for p in d.iterdir() if p.suffix.lower() in _MESH_SUFFIXES)


def run_demo(out: Path, console, run_plan) -> int:
    """Plan every demo part into ``out/<part name>/``; the worst exit code of the parts."""
    from wirecut.config import load_job
    from wirecut.export.safe_output import check_output_dir, output_dir

    check_output_dir(out)
    job = load_job(demo_dir() / "demo_job.toml")
    parts = demo_parts()
    if not parts:
        raise JobError(f"no demo meshes in {demo_dir()}")
    worst = 0
    with output_dir(out) as tmp:
        for mesh in parts:
            console.out(f"== demo part {mesh.stem}")
            code = run_plan(mesh, job, tmp / mesh.stem, None, console, False, out / mesh.stem)
            worst = max(worst, code)
    return worst
