"""The greedy strip sweep against exhaustive search over all cut positions on a grid."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from wirecut.pieces.split import greedy_strips, strip_count_bound, sweep_cuts


def reach_oracle(reach: np.ndarray, step: float, lo: float):
    """Strip [a, b] is feasible when its width is at most the smallest reach of the grid cells
    it overlaps: monotone by construction (a sub-strip overlaps fewer cells and is narrower)."""

    def feasible(a: float, b: float) -> bool:
        i0 = int(math.floor((a - lo) / step + 1e-9))
        i1 = int(math.ceil((b - lo) / step - 1e-9))
        cells = reach[max(i0, 0) : max(min(i1, len(reach)), i0 + 1)]
        return (b - a) <= float(cells.min()) + 1e-9

    return feasible


def brute_force(n: int, step: float, lo: float, hi: float, feasible, max_w: float, min_w: float):
    """Fewest strips by trying every subset of the interior grid positions, smallest first."""
    grid = [lo + k * step for k in range(1, n)]
    for m in range(0, len(grid) + 1):
        for inner in itertools.combinations(grid, m):
            cuts = [lo, *inner, hi]
            widths = np.diff(cuts)
            if np.any(widths > max_w + 1e-9):
                continue
            # every strip but the last must reach the minimum width (the last one is widened)
            if np.any(widths[:-1] < min_w - 1e-9):
                continue
            if all(feasible(a, b) for a, b in itertools.pairwise(cuts)):
                return m + 1
    return None


@pytest.mark.parametrize("seed", range(40))
@pytest.mark.parametrize("min_cells", [1, 2])
def test_greedy_matches_exhaustive_search(seed: int, min_cells: int) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(6, 13))  # 5..11 interior positions: at most 2^11 subsets
    step = 10.0
    lo = 0.0
    hi = n * step
    reach = rng.uniform(min_cells * step, 6 * step, size=n)
    reach = np.floor(reach / step) * step  # reaches on the grid
    feasible = reach_oracle(reach, step, lo)
    max_w = float(rng.integers(3, 7)) * step
    min_w = min_cells * step
    plan = greedy_strips(lo, hi, feasible, max_w, min_w, step)
    # where the search starts changes the number of asks, never the cuts
    guessed = greedy_strips(lo, hi, feasible, max_w, min_w, step, guess_mm=rng.uniform(0, 80))
    assert np.array_equal(guessed.cuts, plan.cuts)
    # two strips asked per round (as the split does in worker processes): the same cuts
    paired = greedy_strips(
        lo, hi, feasible, max_w, min_w, step,
        feasible_many=lambda pairs: [feasible(a, b) for a, b in pairs],
    )  # fmt: skip
    assert np.array_equal(paired.cuts, plan.cuts)
    best = brute_force(n, step, lo, hi, feasible, max_w, min_w)
    assert best is not None
    # exhaustive search over all cut positions on the grid (reference), greedy stays ahead
    # (Kleinberg and Tardos, Algorithm Design, 2006, ch. 4.1)
    assert plan.feasible.all()
    assert plan.count == best
    assert plan.cuts[0] == lo and plan.cuts[-1] >= hi
    assert np.all(np.diff(plan.cuts) <= max_w + 1e-9)


def test_infeasible_zone_gets_min_width_strips() -> None:
    # a zone where nothing reaches the minimum width: covered by min-width strips marked
    # infeasible, the rest by feasible ones (construction)
    step = 5.0
    reach = np.full(40, 100.0)
    reach[10:14] = 1.0  # 50..70 mm: reach below the 20 mm minimum
    feasible = reach_oracle(reach, step, 0.0)
    plan = greedy_strips(0.0, 200.0, feasible, 100.0, 20.0, step)
    bad = np.flatnonzero(~plan.feasible)
    assert len(bad) >= 1
    for k in bad:
        # a min-width strip (pieces.min_width_mm rule of docs/methods-pieces.md)
        assert plan.cuts[k + 1] - plan.cuts[k] == pytest.approx(20.0)
        assert plan.cuts[k] < 70.0 and plan.cuts[k + 1] > 50.0
    assert plan.cuts[-1] >= 200.0


def test_everything_feasible_uses_max_width() -> None:
    # ceil(extent / max width) strips when nothing limits but the width (arithmetic)
    plan = greedy_strips(0.0, 1000.0, lambda a, b: True, 300.0, 100.0, 1.0)
    assert plan.count == math.ceil(1000.0 / 300.0)
    assert np.allclose(plan.cuts, [0.0, 300.0, 600.0, 900.0, 1000.0])


def test_last_narrow_strip_is_widened_to_min_width() -> None:
    plan = greedy_strips(0.0, 620.0, lambda a, b: True, 300.0, 100.0, 1.0)
    # 300 + 300 + 20 mm: the 20 mm rest is widened to the 100 mm minimum (min-width rule)
    assert plan.count == 3
    assert plan.cuts[-1] == pytest.approx(700.0)


@pytest.mark.parametrize("feasible_from", [None, 392.0])
def test_failing_strips_end_at_a_break_line_and_keep_the_minimum_width(feasible_from) -> None:
    # a segment of 516 mm that ends at a break line, with a grid step of 14 mm and a
    # minimum width of 100 mm (8 steps, 112 mm): where the surface fails at the minimum
    # width, strips of 112 mm leave a 12 mm rest at the line. It joined no strip and the
    # last strip ran 100 mm past the line (the next segment's strips then started inside it,
    # and a 12 mm strip appeared between them). The rest now joins the strip before
    if feasible_from is None:
        oracle = lambda a, b: False  # noqa: E731
    else:  # the first 392 mm pass (one strip), the rest fails
        oracle = lambda a, b: b <= feasible_from + 1e-9  # noqa: E731
    plan = greedy_strips(0.0, 516.0, oracle, 1400.0, 100.0, 14.0, end_is_cut=True)
    widths = np.diff(plan.cuts)
    assert plan.cuts[0] == 0.0 and plan.cuts[-1] == pytest.approx(516.0)
    assert np.all(widths >= 100.0 - 1e-9)
    assert np.all(widths > 0)
    if feasible_from is not None:
        assert plan.cuts[1] == pytest.approx(392.0) and plan.feasible[0]
    assert not plan.feasible[-1]


def test_sweep_cuts_equal_parts() -> None:
    # 2500 mm with 20 mm margins and a 1140 mm limit: ceil(2500 / 1100) = 3 equal parts
    cuts = sweep_cuts(0.0, 2500.0, 1140.0, 20.0)
    assert len(cuts) == 4
    assert np.allclose(np.diff(cuts), 2500.0 / 3)
    assert np.all(np.diff(cuts) + 40.0 <= 1140.0)


def test_strip_count_bound_uses_p95_reach() -> None:
    reach = np.linspace(100.0, 200.0, 101)  # p95 = 195 mm (numpy linear percentile)
    assert strip_count_bound(1000.0, reach, 1400.0) == math.ceil(1000.0 / 195.0)
    assert strip_count_bound(1000.0, None, 300.0) == 4  # ceil(1000 / 300)


def ratio_oracle(reach: np.ndarray, step: float, lo: float, power: float):
    """The same feasibility as ``reach_oracle`` told as a ratio ``(width / reach)^power``
    (feasible when <= 1), the form the split's fit oracle answers in."""

    def feasible(a: float, b: float) -> float:
        i0 = int(math.floor((a - lo) / step + 1e-9))
        i1 = int(math.ceil((b - lo) / step - 1e-9))
        cells = reach[max(i0, 0) : max(min(i1, len(reach)), i0 + 1)]
        return ((b - a) / float(cells.min())) ** power

    return feasible


@pytest.mark.parametrize("seed", range(30))
@pytest.mark.parametrize("power", [1.0, 2.0, 3.0])
def test_ratio_oracle_gives_the_same_cuts(seed: int, power: float) -> None:
    # the aimed probes change how often the oracle is asked, never the cuts: same result as
    # the yes/no oracle of the same feasibility (exhaustive search above is the reference)
    rng = np.random.default_rng(100 + seed)
    step = 1.0
    n = 400
    reach = np.repeat(rng.uniform(5.0, 60.0, size=n // 20), 20)
    args = (0.0, float(n), 80.0, 3.0, step)
    yes_no = greedy_strips(*args[:2], reach_oracle(reach, step, 0.0), *args[2:])
    oracle = ratio_oracle(reach, step, 0.0, power)
    ratio = greedy_strips(*args[:2], oracle, *args[2:])
    assert np.array_equal(ratio.cuts, yes_no.cuts)
    paired = greedy_strips(
        *args[:2], oracle, *args[2:], feasible_many=lambda ps: [oracle(a, b) for a, b in ps]
    )
    assert np.array_equal(paired.cuts, yes_no.cuts)
    assert np.array_equal(ratio.feasible, yes_no.feasible)


def test_ratio_oracle_asks_less_on_a_smooth_surface() -> None:
    # deviation growing as the width squared (sagitta w^2 / 8R) with a slowly varying radius:
    # aiming at ratio 1 needs fewer asks than galloping and bisection on the yes/no answer
    def radius(x: float) -> float:
        return 2000.0 + 1000.0 * math.sin(x / 700.0)

    def ratio(a: float, b: float) -> float:
        r = min(radius(a), radius(b), radius(0.5 * (a + b)))
        return (b - a) ** 2 / (8.0 * r) / 0.35

    args = (0.0, 5000.0)
    lim = (900.0, 50.0, 2.0)
    aimed = greedy_strips(*args, ratio, *lim, guess_mm=200.0)
    plain = greedy_strips(*args, lambda a, b: ratio(a, b) <= 1.0, *lim, guess_mm=200.0)
    assert np.array_equal(aimed.cuts, plain.cuts)
    assert aimed.evaluations < 0.9 * plain.evaluations


def test_sweep_limit_keeps_every_blank_inside_a_block_upright():
    from dataclasses import replace

    from wirecut.config import StockSpec, default_job
    from wirecut.pieces.split import split_limits, sweep_limit

    job = default_job()
    job = replace(
        job,
        stock=(
            StockSpec("small", (1000.0, 600.0, 400.0), 3),
            StockSpec("slab", (800.0, 800.0, 300.0), 1),
        ),
    )
    _, longest = split_limits(job)  # min(x travel - 2 clearances, the longest block side)
    assert sweep_limit(job, 500.0) == min(1000.0, longest)  # fits "small" lengthwise
    assert sweep_limit(job, 700.0) == min(800.0, longest)  # too wide for 600: "slab" 800
    assert sweep_limit(job, 900.0) == min(600.0, longest)  # only "small" across: 600 long
    assert sweep_limit(job, 1100.0) == longest  # no kind: left to the allocation
    # every (width, limit) pair fits some kind upright: side by side, each within a side
    for w in (100.0, 600.0, 650.0, 800.0, 1000.0):
        big, small = sorted((w, sweep_limit(job, w)), reverse=True)
        assert any(
            big <= max(k.size_mm[:2]) + 1e-9 and small <= min(k.size_mm[:2]) + 1e-9
            for k in job.stock
        )


def test_a_blank_at_the_travel_limit_leaves_room_for_the_lead_in_and_the_overshoot():
    # a flat panel as long along the sweep as the travel less two home clearances allows: the
    # program leaves the block by the clearance plus the wire's lag (and the kerf's half), so
    # the blank must be shorter than that for the towers to stay in the travel
    import math

    from shapes_pieces import height_target

    from wirecut.config import default_job
    from wirecut.geometry.frames import DirectionFrame
    from wirecut.pieces.split import lead_room_mm, split_limits, split_pieces
    from wirecut.plan import _piece_plan
    from wirecut.toolpath.kerf import kerf_mm
    from wirecut.toolpath.lag import block_lag_gain_s

    job = default_job()
    m = job.machine
    max_w, longest = split_limits(job)
    travel = m.travel_x_mm[1] - m.travel_x_mm[0]
    # the room is the clearance, the lag at cut speed of the widest centred strip, half the
    # widest kerf (toolpath.build's exit overshoot and kerf offset)
    z1 = 0.5 * (m.span_mm - max_w)
    lag = block_lag_gain_s(z1, z1 + max_w, job.wire, m.span_mm) * job.wire.cut_speed_mm_s
    room = m.home_clearance_mm + lag + 0.5 * float(kerf_mm(0.0, job.wire))
    assert lead_room_mm(job, max_w) == room and lag > 0.5
    assert longest == min(travel - 2.0 * room, max(max(s.size_mm[:2]) for s in job.stock))
    length = travel - 2.0 * m.home_clearance_mm - 2.0 * job.pieces.sweep_margin_mm - 1.0
    target = height_target(
        np.linspace(0.0, length, 40), np.linspace(0.0, 600.0, 11), lambda x, y: 100.0 + 0 * x
    )
    across = DirectionFrame.from_angle(math.radians(90.0), np.array([0.0, 0.0, 1.0]), "below")
    pieces = split_pieces(target, None, [across], job).pieces
    # the 1139 mm blank, 600 mm wide, would need 0.9 mm more travel than there is (no
    # program at all before the room was kept): two halves instead
    assert len(pieces) == 2
    for piece in pieces:
        plan, findings = _piece_plan(target, piece, job)
        assert plan.program is not None
        assert not [f for f in findings if f.code == "outside-travel"]
