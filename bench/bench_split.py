"""Benchmark: split (with ruled fits, no G-code) of a doubly curved panel.

A 6 m x 3 m panel, z = 150 cos(pi x / 6000) cos(pi y / 3000) + x^2 / 40000 (synclastic in the
middle), meshed as a regular grid of n triangles. Prints, as a table, the wall time of
``split_pieces`` (direction search included, as ``plan`` runs it) and ``allocate``, and the
peak resident memory of the process and of its worker processes, for growing triangle counts
at the full area and for a growing area at a fixed triangle density. Each row runs in a fresh
process. Run: ``.venv/bin/python bench/bench_split.py`` (``--quick`` for the small rows only).
"""

from __future__ import annotations

import json
import math
import resource
import subprocess
import sys
import time
from dataclasses import replace

import numpy as np

from wirecut.config import JobProfile, StockSpec
from wirecut.geometry.mesh import target_from_arrays
from wirecut.pieces.split import split_pieces
from wirecut.pieces.stock import allocate


def panel(length: float, width: float, triangles: int):
    """Grid mesh of the panel over [0, length] x [0, width] with about ``triangles`` faces."""
    cells = triangles / 2
    nx = max(2, int(round(math.sqrt(cells * length / width))))
    ny = max(2, int(round(cells / nx)))
    xs = np.linspace(0.0, length, nx + 1)
    ys = np.linspace(0.0, width, ny + 1)
    X, Y = np.meshgrid(xs, ys, indexing="ij")
    Z = 150 * np.cos(np.pi * (X - 3000) / 6000) * np.cos(np.pi * (Y - 1500) / 3000)
    Z = Z + (X - 3000) ** 2 / 40000
    v = np.column_stack([X.ravel(), Y.ravel(), Z.ravel()])
    idx = np.arange(len(xs) * len(ys)).reshape(len(xs), len(ys))
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    f = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    return v, f


def run(length: float, width: float, triangles: int, job: JobProfile) -> dict:
    from wirecut.geometry.cuttability import analyse_surface
    from wirecut.ruled.direction import search_direction

    v, f = panel(length, width, triangles)
    target, _ = target_from_arrays(v, f, job)
    t0 = time.perf_counter()
    analysis = analyse_surface(target, job)
    direction = search_direction(target, analysis, job)
    t1 = time.perf_counter()
    result = split_pieces(target, analysis, direction, job)
    t2 = time.perf_counter()
    alloc = allocate(result.pieces, job)
    t3 = time.perf_counter()
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    devs = [p.fit.report.max_abs_mm for p in result.pieces]
    return {
        "area_m2": length * width / 1e6,
        "triangles": len(f),
        "pieces": len(result.pieces),
        "bound": result.lower_bound,
        "blocks": alloc.blocks_used,
        "max_dev": max(devs) if devs else float("nan"),
        "analysis_s": t1 - t0,
        "split_s": t2 - t1,
        "alloc_s": t3 - t2,
        "peak_mb": own,
        "worker_peak_mb": kids,
    }


def main() -> None:
    if "--case" in sys.argv:
        i = sys.argv.index("--case")
        length, width, n = (float(x) for x in sys.argv[i + 1 : i + 4])
        print(json.dumps(run(length, width, int(n), _job())))
        return
    quick = "--quick" in sys.argv
    cases = [
        (6000.0, 3000.0, n) for n in ([25_000, 100_000] if quick else [25_000, 100_000, 400_000])
    ]
    if not quick:
        # growing area at the density of the 400k panel
        for scale in (0.25, 0.5):
            side = math.sqrt(scale)
            cases.append((6000.0 * side, 3000.0 * side, int(400_000 * scale)))
    head = ["area m2", "triangles", "pieces", "bound", "blocks", "max dev mm",
            "analysis + direction s", "split s", "alloc s", "peak MB",
            "worker peak MB"]  # fmt: skip
    print("| " + " | ".join(head) + " |")
    print("|" + "---|" * len(head), flush=True)
    for length, width, n in cases:
        out = subprocess.run(
            [sys.executable, __file__, "--case", str(length), str(width), str(n)],
            capture_output=True, text=True, check=True,
        ).stdout  # fmt: skip
        r = json.loads(out.strip().splitlines()[-1])
        print(
            f"| {r['area_m2']:.2f} | {r['triangles']:,} | {r['pieces']} | {r['bound']} | "
            f"{r['blocks']} | {r['max_dev']:.3f} | {r['analysis_s']:.1f} | {r['split_s']:.1f} | "
            f"{r['alloc_s']:.2f} | {r['peak_mb']:.0f} | {r['worker_peak_mb']:.0f} |",
            flush=True,
        )


def _job() -> JobProfile:
    return replace(JobProfile(), stock=(StockSpec("long", (4000.0, 1200.0, 1000.0), 200),))


if __name__ == "__main__":
    main()
