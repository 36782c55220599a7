"""Hand-made CutPrograms whose answers are known by construction, and a hypothesis strategy.

Shared by the G-code tests (imported by file name: pytest puts this folder on sys.path).
"""

from __future__ import annotations

import dataclasses

import numpy as np
from hypothesis import strategies as st

from wirecut.config import Dialect, FeedRule, JobProfile, default_job
from wirecut.toolpath.program import CutProgram, Op

__all__ = [
    "job_for",
    "rectangle_program",
    "tapered_program",
    "random_program",
    "programs",
]


def job_for(
    dialect: Dialect = Dialect.XYUV_INVERSE_TIME,
    feed_rule: FeedRule = FeedRule.FIRST_TOWER,
    axes: tuple[str, str, str, str] = ("X", "Y", "Z", "A"),
) -> JobProfile:
    """The default job with another dialect, feed rule and four-axis letters."""
    job = default_job()
    machine = dataclasses.replace(job.machine, dialect=dialect, feed_rule=feed_rule, axes=axes)
    return dataclasses.replace(job, machine=machine)


def _program(piece, moves, header=()) -> CutProgram:
    ops = [m[0] for m in moves]
    towers = np.array([m[1] for m in moves], float)
    durations = np.array([m[2] for m in moves], float)
    return CutProgram(piece, np.array(ops), towers, durations, np.zeros(4), 60.0, header)


def rectangle_program(x0=100.0, y0=50.0, w=400.0, h=250.0, speed=4.0) -> CutProgram:
    """Both towers trace the same w x h rectangle at ``speed`` mm/s: each side takes
    length / speed seconds (a prismatic cut: straight wire parallel to z)."""
    c = [(x0, y0), (x0 + w, y0), (x0 + w, y0 + h), (x0, y0 + h), (x0, y0)]
    moves = [(Op.RAPID, [x0, y0, x0, y0], 0.0), (Op.HEAT_ON, [x0, y0, x0, y0], 0.0)]
    moves.append((Op.DWELL, [x0, y0, x0, y0], 3.0))
    for (xa, ya), (xb, yb) in zip(c[:-1], c[1:], strict=True):
        moves.append((Op.FEED, [xb, yb, xb, yb], np.hypot(xb - xa, yb - ya) / speed))
    moves.append((Op.HEAT_OFF, [x0, y0, x0, y0], 0.0))
    moves.append((Op.RAPID, [0.0, 0.0, 0.0, 0.0], 0.0))
    header = (("stock", "long"), ("block", "500 x 800 x 300 mm"), ("kerf left face", "1.200 mm"))
    return _program("P01", moves, header)


def tapered_program(cx=500.0, cy=300.0, a=200.0, b=100.0, seconds=25.0) -> CutProgram:
    """A tapered square prism: the left tower traces a square of side ``a``, the right one
    the concentric square of side ``b``, corner to corner in the same time (a frustum)."""
    corners = np.array([[-1, -1], [1, -1], [1, 1], [-1, 1], [-1, -1]], float) / 2.0
    left = np.array([cx, cy]) + a * corners
    right = np.array([cx, cy]) + b * corners
    moves = [(Op.RAPID, [*left[0], *right[0]], 0.0), (Op.HEAT_ON, [*left[0], *right[0]], 0.0)]
    for i in range(1, 5):
        moves.append((Op.FEED, [*left[i], *right[i]], seconds))
    moves.append((Op.HEAT_OFF, [*left[4], *right[4]], 0.0))
    return _program("P02-taper", moves, (("stock", "long"),))


def random_program(rng: np.random.Generator, n: int, job: JobProfile) -> CutProgram:
    """A valid random program: n feeds along a random walk inside travel, with a few dwells."""
    lo = np.array([job.machine.travel_x_mm[0], job.machine.travel_y_mm[0]] * 2)
    hi = np.array([job.machine.travel_x_mm[1], job.machine.travel_y_mm[1]] * 2)
    pos = lo + (hi - lo) * rng.uniform(0.2, 0.8, 4)
    moves = [(Op.RAPID, pos.copy(), 0.0), (Op.HEAT_ON, pos.copy(), 0.0)]
    for _ in range(n):
        if rng.uniform() < 0.05:
            moves.append((Op.DWELL, pos.copy(), float(rng.uniform(0.1, 5.0))))
            continue
        pos = np.clip(pos + rng.normal(0.0, 5.0, 4), lo, hi)
        moves.append((Op.FEED, pos.copy(), float(rng.uniform(0.05, 20.0))))
    moves.append((Op.HEAT_OFF, pos.copy(), 0.0))
    return _program("R01", moves)


@st.composite
def programs(draw, job: JobProfile | None = None) -> CutProgram:
    """Random CutPrograms of any op sequence, positions inside the default travel (which the
    writer must accept), durations from 0 (untimed) to 10^4 s."""
    job = job or default_job()
    n = draw(st.integers(0, 25))
    x = st.floats(job.machine.travel_x_mm[0], job.machine.travel_x_mm[1])
    y = st.floats(job.machine.travel_y_mm[0], job.machine.travel_y_mm[1])
    moves = []
    pos = [draw(x), draw(y), draw(x), draw(y)]
    start = list(pos)
    for _ in range(n):
        op = draw(st.sampled_from(list(Op)))
        if op in (Op.RAPID, Op.FEED):
            if draw(st.booleans()):
                pos = [draw(x), draw(y), draw(x), draw(y)]
            else:  # a small step, down to below the written resolution
                step = draw(st.floats(0.0, 2.0))
                pos = [
                    min(max(p + step * s, lo), hi)
                    for p, s, (lo, hi) in zip(
                        pos,
                        draw(st.lists(st.sampled_from([-1.0, 0.0, 1.0]), min_size=4, max_size=4)),
                        [job.machine.travel_x_mm, job.machine.travel_y_mm] * 2,
                        strict=True,
                    )
                ]
        seconds = 0.0
        if op in (Op.FEED, Op.DWELL):
            seconds = draw(st.one_of(st.just(0.0), st.floats(1e-3, 1e4)))
        moves.append((op, list(pos), seconds))
    ops = np.array([m[0] for m in moves], dtype=np.int64)
    towers = np.array([m[1] for m in moves], float).reshape(-1, 4)
    durations = np.array([m[2] for m in moves], float)
    return CutProgram("H01", ops, towers, durations, np.array(start), 55.0)
