"""Speed of the ``check`` analysis: load_target + analyse_surface on generated surfaces.

Each size runs in its own subprocess (fresh interpreter, honest peak memory). The surface is a
wavy sheet ``z = 40 sin(x / 170) cos(y / 230) + x y / 8000`` over 2 m x 1.5 m (ruled, synclastic
and developable areas all present), written to a binary STL in a temporary folder and read back.

Columns: triangles; floor = read the STL with trimesh + one cKDTree build and nearest query over
its vertices (the least any mesh analysis must do); load = load_target; analyse = analyse_surface;
peak = peak resident memory of the subprocess (ru_maxrss). Wall times in seconds.

Run: ``.venv/bin/python bench/bench_check.py [--sizes 10000 100000 1000000]``
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile

__all__ = ["main"]

_CHILD = r"""
import json, resource, sys, time
import numpy as np

from pathlib import Path
triangles, folder = int(sys.argv[1]), Path(sys.argv[2])
n = max(2, int(round(np.sqrt(triangles / 2.0)))) + 1
x, y = np.meshgrid(np.linspace(-1000, 1000, n), np.linspace(-750, 750, n), indexing="ij")
z = 40 * np.sin(x / 170) * np.cos(y / 230) + x * y / 8000
v = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
i, j = np.meshgrid(np.arange(n - 1), np.arange(n - 1), indexing="ij")
a = (i * n + j).ravel()
f = np.concatenate([np.column_stack([a, a + n, a + n + 1]), np.column_stack([a, a + n + 1, a + 1])])
import trimesh
path = folder / f"sheet_{triangles}.stl"
trimesh.Trimesh(v, f, process=False).export(path)

from scipy.spatial import cKDTree
from wirecut.config import default_job
from wirecut.geometry.cuttability import analyse_surface
from wirecut.geometry.mesh import load_target

t0 = time.perf_counter()
m = trimesh.load(str(path), process=False)
tree = cKDTree(m.vertices)
tree.query(m.vertices)
t1 = time.perf_counter()
job = default_job()
target, _ = load_target(path, job)
t2 = time.perf_counter()
an = analyse_surface(target, job)
t3 = time.perf_counter()
peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps({
    "triangles": int(len(target.faces)), "vertices": int(len(target.vertices)),
    "floor_s": t1 - t0, "load_s": t2 - t1, "analyse_s": t3 - t2, "peak_mb": peak_mb,
    "marched": int(an.marched.sum()),
    "feasible": an.feasible_area_fraction(job.pieces.min_width_mm),
}))
"""


def main(argv: list[str] | None = None) -> None:
    """Run the benchmark and print its table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000, 1_000_000])
    args = parser.parse_args(argv)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        for size in args.sizes:
            out = subprocess.run(
                [sys.executable, "-c", _CHILD, str(size), tmp],
                check=True,
                capture_output=True,
                text=True,
            )
            rows.append(json.loads(out.stdout.strip().splitlines()[-1]))
    head = f"{'triangles':>10} {'vertices':>9} {'floor s':>8} {'load s':>7} {'analyse s':>9} "
    head += f"{'total s':>8} {'peak MB':>8} {'marched':>8}"
    print(head)
    for r in rows:
        print(
            f"{r['triangles']:>10} {r['vertices']:>9} {r['floor_s']:>8.2f} {r['load_s']:>7.2f} "
            f"{r['analyse_s']:>9.2f} {r['load_s'] + r['analyse_s']:>8.2f} {r['peak_mb']:>8.0f} "
            f"{r['marched']:>8}"
        )


if __name__ == "__main__":
    main()
