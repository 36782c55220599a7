"""Generate the meshes of the demo scenario: the Lantern Quay pavilion of Orrin Ness.

Orrin Ness is a fictional harbour town and the Lantern Quay pavilion a fictional small
building: a shelter of cast concrete shells on the quay. Its four cast parts need EPS molds:

=====================  =======================================  ===========  =============
file                   part                                     footprint    surface kind
=====================  =======================================  ===========  =============
canopy_saddle.stl      canopy segment, a hyperbolic paraboloid  2400 x 1600  K < 0, doubly ruled
bench_shell.stl        bench shell, closed slab with a domed    1800 x 1200  K > 0 (synclastic)
                       top (a closed solid)
wave_wall.stl          wave wall panel laid flat: a sine        3000 x 1400  K = 0 (developable)
                       profile extruded
stair_stringer.stl     twisted stair stringer, a right          1200 x 2800  K < 0, singly ruled
                       helicoid patch
=====================  =======================================  ===========  =============

Every surface is a height field z(x, y) in mm, part frame, up = +z, seen from above: the mold's
foam lies below it (``mold.side = "below"``). Grid vertices inside each footprint are shifted in
plan by a seeded random jitter so the triangulation is irregular like a designer's export, while
every vertex stays exactly on the analytic surface. The script is deterministic: running it
again writes byte-identical files (binary STL written by trimesh).

Run ``python demo_parts/make_demo.py`` from the repository root (or ``--out DIR``).
"""

from __future__ import annotations

import argparse
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import trimesh

__all__ = ["DemoPart", "PARTS", "build_part", "build_parts", "stl_bytes", "write_parts"]

SEED = 20240611
"""Seed of the plan jitter (any fixed integer; changing it changes the stored meshes)."""

JITTER = 0.2
"""Plan jitter of interior grid vertices, as a fraction of the grid spacing."""


@dataclass(frozen=True)
class DemoPart:
    """One demo part: a height field over a rectangle.

    Attributes
    ----------
    name : str
        File stem (``<name>.stl``).
    title : str
        What the part is, for the README and the report.
    size_xy_mm : (2,) float, mm, part frame
        Footprint (length along x, width along y); the footprint starts at the origin.
    grid : (2,) int
        Grid vertices along x and along y.
    height : callable
        ``height(x, y) -> z``: arrays of plan coordinates (mm) to heights (mm), part frame.
    solid : bool
        True: a closed slab from z = 0 up to the surface; False: the open surface only.
    """

    name: str
    title: str
    size_xy_mm: tuple[float, float]
    grid: tuple[int, int]
    height: Callable[[np.ndarray, np.ndarray], np.ndarray]
    solid: bool = False


def _saddle(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Hyperbolic paraboloid z = 250 + 150 (2x/Lx - 1)(2y/Ly - 1) + 40 (2x/Lx - 1): 100-400 mm."""
    u = 2.0 * x / 2400.0 - 1.0
    v = 2.0 * y / 1600.0 - 1.0
    return 250.0 + 150.0 * u * v + 40.0 * u


def _dome(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Elliptic paraboloid top of the bench: 300 mm at the centre, 80 mm at the corners."""
    u = 2.0 * x / 1800.0 - 1.0
    v = 2.0 * y / 1200.0 - 1.0
    return 300.0 - 110.0 * u**2 - 110.0 * v**2


def _wave(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Sine profile along x (wavelength 1000 mm, amplitude 120 mm) extruded along y."""
    return 220.0 + 120.0 * np.sin(2.0 * np.pi * x / 1000.0) + 0.0 * y


def _helicoid(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Right helicoid about the line (x = 600, z = 250) along y, turning 30 degrees over 2800 mm.

    z = 250 + (x - 600) tan(alpha(y)), alpha from -15 to +15 degrees: each section y = const is a
    straight line, so the surface is ruled along x.
    """
    alpha = np.radians(-15.0 + 30.0 * y / 2800.0)
    return 250.0 + (x - 600.0) * np.tan(alpha)


PARTS: tuple[DemoPart, ...] = (
    DemoPart(
        "canopy_saddle",
        "canopy segment (hyperbolic paraboloid)",
        (2400.0, 1600.0),
        (97, 65),
        _saddle,
    ),
    DemoPart(
        "bench_shell",
        "bench shell (closed slab, domed top)",
        (1800.0, 1200.0),
        (73, 49),
        _dome,
        True,
    ),
    DemoPart(
        "wave_wall", "wave wall panel laid flat (sine extruded)", (3000.0, 1400.0), (121, 41), _wave
    ),
    DemoPart(
        "stair_stringer",
        "twisted stair stringer (right helicoid)",
        (1200.0, 2800.0),
        (41, 113),
        _helicoid,
    ),
)


def _grid_faces(nx: int, ny: int) -> np.ndarray:
    """Triangles (2 (nx-1)(ny-1), 3) of a grid whose vertex (i, j) has index i * ny + j.

    Counter-clockwise seen from +z, so the normals of a height field point up.
    """
    i, j = np.meshgrid(np.arange(nx - 1), np.arange(ny - 1), indexing="ij")
    a = (i * ny + j).ravel()
    b = ((i + 1) * ny + j).ravel()
    c = ((i + 1) * ny + j + 1).ravel()
    d = (i * ny + j + 1).ravel()
    return np.concatenate([np.column_stack([a, b, c]), np.column_stack([a, c, d])])


def _boundary_loop(nx: int, ny: int) -> np.ndarray:
    """Grid indices of the footprint boundary, counter-clockwise seen from +z, not closed."""
    bottom = [i * ny for i in range(nx)]
    right = [(nx - 1) * ny + j for j in range(1, ny)]
    top = [i * ny + ny - 1 for i in range(nx - 2, -1, -1)]
    left = [j for j in range(ny - 2, 0, -1)]
    return np.array(bottom + right + top + left)


def build_part(part: DemoPart, rng: np.random.Generator) -> trimesh.Trimesh:
    """The mesh of one part, mm, part frame (see the module docstring)."""
    nx, ny = part.grid
    lx, ly = part.size_xy_mm
    gx, gy = np.meshgrid(np.linspace(0.0, lx, nx), np.linspace(0.0, ly, ny), indexing="ij")
    jitter = rng.uniform(-JITTER, JITTER, size=(nx, ny, 2))
    jitter[[0, -1], :, :] = 0.0  # the boundary stays on the footprint rectangle
    jitter[:, [0, -1], :] = 0.0
    x = (gx + jitter[..., 0] * lx / (nx - 1)).ravel()
    y = (gy + jitter[..., 1] * ly / (ny - 1)).ravel()
    z = part.height(x, y)
    top = np.column_stack([x, y, z])
    faces = _grid_faces(nx, ny)
    if not part.solid:
        return trimesh.Trimesh(top, faces, process=False)
    n = len(top)
    bottom = np.column_stack([x, y, np.zeros_like(z)])
    loop = _boundary_loop(nx, ny)
    nxt = np.roll(loop, -1)
    # wall quads (loop[k], nxt[k]) on top, the same pair on the bottom; outward normals
    walls = np.concatenate(
        [np.column_stack([loop, loop + n, nxt + n]), np.column_stack([loop, nxt + n, nxt])]
    )
    bottom_faces = faces[:, ::-1] + n  # seen from below: reversed winding, normals down
    mesh = trimesh.Trimesh(
        np.vstack([top, bottom]), np.vstack([faces, bottom_faces, walls]), process=False
    )
    return mesh


def build_parts() -> dict[str, trimesh.Trimesh]:
    """Every demo part by file stem, built from one seeded generator in :data:`PARTS` order."""
    rng = np.random.default_rng(SEED)
    return {p.name: build_part(p, rng) for p in PARTS}


def stl_bytes(mesh: trimesh.Trimesh) -> bytes:
    """Binary STL of a mesh as trimesh writes it."""
    return trimesh.exchange.stl.export_stl(mesh)


def write_parts(out: Path) -> list[Path]:
    """Write every part as ``out/<name>.stl``; return the paths."""
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, mesh in build_parts().items():
        path = out / f"{name}.stl"
        path.write_bytes(stl_bytes(mesh))
        paths.append(path)
    return paths


def main() -> None:
    """Command line: write the meshes beside this script (or to ``--out``)."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=Path(__file__).resolve().parent)
    args = ap.parse_args()
    for path in write_parts(args.out):
        mesh = trimesh.load(path)
        print(f"{path.name}: {len(mesh.faces)} triangles, {path.stat().st_size} bytes")


if __name__ == "__main__":
    main()
