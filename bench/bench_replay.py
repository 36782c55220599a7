"""Build and replay 20 hand-made pieces: time and peak memory per stage (a table, not a test)."""

from __future__ import annotations

import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "toolpath"))
from toolpath_shapes import TargetArrays, arc_profile, make_piece  # noqa: E402

from wirecut.config import default_job  # noqa: E402
from wirecut.gcode.replay import replay  # noqa: E402
from wirecut.toolpath.build import build_program  # noqa: E402


def _piece(i: int):
    rng = np.random.default_rng(i)
    radius = rng.uniform(600.0, 3000.0)
    x = np.linspace(200.0, 800.0, 31)
    left = arc_profile(500.0, 200.0 - radius, radius, x)
    right = arc_profile(500.0, 200.0 - radius * 1.02, radius * 1.02, x)
    gx, gz = np.meshgrid(np.linspace(201.0, 799.0, 200), np.linspace(310.0, 1290.0, 10))
    gx, gz = gx.ravel(), gz.ravel()
    t = (gz - 300.0) / 1000.0
    r = radius * (1 + 0.02 * t)
    gy = 200.0 - r + np.sqrt(r * r - (gx - 500.0) ** 2)
    n = np.column_stack([gx - 500.0, gy - 200.0 + r, np.zeros_like(gx)])
    n /= np.linalg.norm(n, axis=1)[:, None]
    samples = TargetArrays(np.column_stack([gx, gy, gz]), n, np.ones(len(gx)))
    piece = make_piece(left, right, (200.0, 800.0), (0.0, 300.0), (300.0, 1300.0), f"P{i + 1:02d}")
    return piece, samples


def main() -> None:
    job = default_job()
    rows = []
    for i in range(20):
        piece, samples = _piece(i)
        tracemalloc.start()
        t0 = time.perf_counter()
        program, report, _ = build_program(piece, job)
        t1 = time.perf_counter()
        result = replay(program, piece, job, samples)
        t2 = time.perf_counter()
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        rows.append((piece.id, len(program.ops), report.iterations, t1 - t0, t2 - t1, peak / 1e6,
                     result.max_abs_mm, result.machine_time_s))  # fmt: skip
    print("| piece | ops | iter | build s | replay s | peak MB | replay max mm | machine s |")
    print("|---|---|---|---|---|---|---|---|")
    for r in rows:
        cells = (r[0], r[1], r[2], f"{r[3]:.3f}", f"{r[4]:.3f}", f"{r[5]:.1f}", f"{r[6]:.3f}")
        print("| " + " | ".join(str(c) for c in cells) + f" | {r[7]:.0f} |")
    tot_b = sum(r[3] for r in rows)
    tot_r = sum(r[4] for r in rows)
    print(f"| total | | | {tot_b:.2f} | {tot_r:.2f} | max {max(r[5] for r in rows):.1f} | | |")


if __name__ == "__main__":
    main()
