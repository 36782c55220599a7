"""Benchmark: split (with ruled fits, no G-code) of a doubly curved panel.

A 6 m x 3 m panel, z = 150 cos(pi x / 6000) cos(pi y / 3000) + x^2 / 40000 (synclastic in the
middle), meshed as a regular grid of n triangles. Prints wall time and peak traced memory of
``split_pieces`` and ``allocate``, for growing triangle counts at the full area and for a
growing area at a fixed triangle density. Run: ``.venv/bin/python bench/bench_split.py``
(``--quick`` for the small rows only).
"""

from __future__ import annotations

import math
import sys
import time
import tracemalloc
from dataclasses import replace

import numpy as np

from wirecut.config import JobProfile, StockSpec
from wirecut.geometry.frames import DirectionFrame
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
    v, f = panel(length, width, triangles)
    target, _ = target_from_arrays(v, f, job)
    frame = DirectionFrame.from_angle(math.pi / 2, np.array([0.0, 0.0, 1.0]), "below")
    tracemalloc.start()
    t0 = time.perf_counter()
    result = split_pieces(target, None, frame, job)
    t1 = time.perf_counter()
    alloc = allocate(result.pieces, job)
    t2 = time.perf_counter()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    devs = [p.fit.report.max_abs_mm for p in result.pieces]
    return {
        "area_m2": length * width / 1e6,
        "triangles": len(f),
        "pieces": len(result.pieces),
        "blocks": alloc.blocks_used,
        "max_dev": max(devs) if devs else float("nan"),
        "split_s": t1 - t0,
        "alloc_s": t2 - t1,
        "peak_mb": peak / 2**20,
    }


def main() -> None:
    quick = "--quick" in sys.argv
    job = replace(JobProfile(), stock=(StockSpec("long", (4000.0, 1200.0, 1000.0), 200),))
    head = f"{'area m2':>8} {'triangles':>10} {'pieces':>6} {'blocks':>6} {'max dev':>8} "
    head += f"{'split s':>8} {'alloc s':>8} {'peak MB':>8}"
    print(head, flush=True)
    cases = [
        (6000.0, 3000.0, n) for n in ([25_000, 100_000] if quick else [25_000, 100_000, 400_000])
    ]
    if not quick:
        # growing area at the density of the 400k panel
        for scale in (0.25, 0.5):
            side = math.sqrt(scale)
            cases.append((6000.0 * side, 3000.0 * side, int(400_000 * scale)))
    for length, width, n in cases:
        r = run(length, width, n, job)
        print(
            f"{r['area_m2']:8.2f} {r['triangles']:10d} {r['pieces']:6d} {r['blocks']:6d} "
            f"{r['max_dev']:8.3f} {r['split_s']:8.1f} {r['alloc_s']:8.2f} {r['peak_mb']:8.0f}",
            flush=True,
        )


if __name__ == "__main__":
    main()
