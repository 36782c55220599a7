"""Benchmark: write and read a 20-piece plan's worth of G-code programs.

Each piece is a random walk of MOVES feeds inside the default travel (with a few dwells),
written in each dialect and read back. Prints a table of wall time and peak Python memory
(tracemalloc, in a second run of the step). Not a test: run it by hand,
``.venv/bin/python bench/bench_gcode.py``.
"""

from __future__ import annotations

import argparse
import dataclasses
import time
import tracemalloc

import numpy as np

from wirecut.config import Dialect, FeedRule, default_job
from wirecut.gcode.reader import read_gcode
from wirecut.gcode.writer import write_gcode
from wirecut.toolpath.program import CutProgram, Op


def random_programs(pieces: int, moves: int, seed: int = 1) -> list[CutProgram]:
    """``pieces`` programs of ``moves`` feeds each (5 % of the steps are dwells)."""
    job = default_job()
    rng = np.random.default_rng(seed)
    lo = np.array([job.machine.travel_x_mm[0], job.machine.travel_y_mm[0]] * 2)
    hi = np.array([job.machine.travel_x_mm[1], job.machine.travel_y_mm[1]] * 2)
    out = []
    for k in range(pieces):
        steps = np.clip(rng.normal(0.0, 3.0, (moves, 4)), -20, 20)
        towers = np.clip((lo + hi) / 2 + np.cumsum(steps, axis=0), lo, hi)
        ops = np.where(rng.uniform(size=moves) < 0.05, Op.DWELL, Op.FEED)
        towers[ops == Op.DWELL] = towers[np.maximum(np.flatnonzero(ops == Op.DWELL) - 1, 0)]
        ops = np.concatenate([[Op.RAPID, Op.HEAT_ON], ops, [Op.HEAT_OFF]])
        towers = np.vstack([towers[:1], towers[:1], towers, towers[-1:]])
        durations = np.concatenate([[0.0, 0.0], rng.uniform(0.05, 5.0, moves), [0.0]])
        out.append(CutProgram(f"P{k + 1:02d}", ops, towers, durations, towers[0], 60.0))
    return out


def _measure(fn):
    """Result, wall time s (plain run) and peak traced memory MiB (second run, traced)."""
    t0 = time.perf_counter()
    result = fn()
    seconds = time.perf_counter() - t0
    del result
    tracemalloc.start()
    result = fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return result, seconds, peak / 2**20


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--pieces", type=int, default=20)
    parser.add_argument("--moves", type=int, default=5000)
    args = parser.parse_args()
    programs = random_programs(args.pieces, args.moves)
    base = default_job()
    jobs = {
        "xyuv-inverse-time": base,
        "four-axis upm, first-tower": dataclasses.replace(
            base,
            machine=dataclasses.replace(base.machine, dialect=Dialect.FOUR_AXIS_UNITS_PER_MINUTE),
        ),
        "four-axis upm, all-axes": dataclasses.replace(
            base,
            machine=dataclasses.replace(
                base.machine,
                dialect=Dialect.FOUR_AXIS_UNITS_PER_MINUTE,
                feed_rule=FeedRule.ALL_AXES,
            ),
        ),
    }
    lines = sum(len(p.ops) for p in programs)
    print(f"{args.pieces} programs x {args.moves} moves ({lines} operations in all)")
    print(f"{'dialect':<28} {'step':<6} {'time s':>8} {'peak MiB':>9} {'MB text':>8} {'ops/s':>10}")
    for name, job in jobs.items():
        texts, t_write, m_write = _measure(lambda job=job: [write_gcode(p, job) for p in programs])
        size = sum(len(t) for t in texts) / 1e6
        _, t_read, m_read = _measure(
            lambda job=job, texts=texts: [read_gcode(t, job) for t in texts]
        )
        for step, t, m in (("write", t_write, m_write), ("read", t_read, m_read)):
            print(f"{name:<28} {step:<6} {t:>8.2f} {m:>9.1f} {size:>8.2f} {lines / t:>10.0f}")


if __name__ == "__main__":
    main()
