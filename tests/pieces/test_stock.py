"""Guillotine stock allocation: known packings, refusals, bounds, no overlaps."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest

from wirecut.config import JobProfile, StockSpec
from wirecut.errors import JobError
from wirecut.findings import Severity
from wirecut.geometry.frames import DirectionFrame
from wirecut.pieces.piece import Block, Piece
from wirecut.pieces.stock import allocate, pack


def job_with(*stock: StockSpec) -> JobProfile:
    return replace(JobProfile(), stock=tuple(stock))


def fake_piece(pid: str, size: tuple[float, float, float], kept: float = 0.0) -> Piece:
    """A piece whose only meaningful part is its blank (sweep, wire, height)."""
    a, b, c = size
    frame = DirectionFrame.from_angle(0.0, np.array([0.0, 0.0, 1.0]), "below")
    block = Block((0.0, a), (0.0, c), (0.0, b))
    return Piece(
        pid, np.zeros((3, 2)), frame, np.eye(4), block, None, extra={"kept_volume_mm3": kept}
    )


def boxes_disjoint(placements) -> bool:
    for i, p in enumerate(placements):
        for q in placements[i + 1 :]:
            if (p.stock, p.block_index) != (q.stock, q.block_index):
                continue
            lo = np.maximum(p.origin_mm, q.origin_mm)
            hi = np.minimum(p.origin_mm + p.size_mm, q.origin_mm + q.size_mm)
            if np.all(hi - lo > 1e-6):
                return False
    return True


def test_eight_half_size_blanks_fill_one_block() -> None:
    # 2 x 2 x 2 halves of a box fill it exactly (construction)
    job = job_with(StockSpec("cube", (1000.0, 800.0, 600.0), 3))
    pieces = [fake_piece(f"P{i:02d}", (500.0, 400.0, 300.0)) for i in range(1, 9)]
    alloc = allocate(pieces, job)
    assert alloc.blocks_used == 1
    assert alloc.volume_lower_bound == 1  # ceil(8 * 0.06 / 0.48) = 1 (arithmetic)
    assert alloc.foam_volume_m3 == pytest.approx(0.48)  # 1.0 * 0.8 * 0.6 m^3
    assert boxes_disjoint(alloc.placements)


def test_nine_half_size_blanks_need_two_blocks() -> None:
    job = job_with(StockSpec("cube", (1000.0, 800.0, 600.0), 3))
    pieces = [fake_piece(f"P{i:02d}", (500.0, 400.0, 300.0)) for i in range(1, 10)]
    alloc = allocate(pieces, job)
    # 9 * 0.06 m^3 > 0.48 m^3: volume bound ceil(0.54 / 0.48) = 2 (arithmetic)
    assert alloc.volume_lower_bound == 2
    assert alloc.blocks_used == 2


def test_rotation_about_the_vertical() -> None:
    # a 700 x 1900 x 500 blank fits a 2000 x 800 x 600 block only turned by 90 degrees
    job = job_with(StockSpec("s", (2000.0, 800.0, 600.0), 1))
    alloc = allocate([fake_piece("P01", (700.0, 1900.0, 500.0))], job)
    pl = alloc.placements[0]
    assert not pl.on_side
    assert np.allclose(pl.size_mm, [1900.0, 700.0, 500.0])


def test_blank_higher_than_stock_lies_on_its_side() -> None:
    # 900 high in a 600 high block: only lying down (its height along the block's length)
    job = job_with(StockSpec("s", (2000.0, 800.0, 600.0), 1))
    alloc = allocate([fake_piece("P01", (500.0, 700.0, 900.0))], job)
    pl = alloc.placements[0]
    assert pl.on_side
    assert np.all(pl.size_mm <= np.array([2000.0, 800.0, 600.0]))
    assert any(f.code == "blank-on-side" for f in alloc.findings)


def test_blank_larger_than_every_stock_is_left_out_with_a_finding() -> None:
    job = job_with(StockSpec("small", (1000.0, 800.0, 600.0), 5))
    pieces = [fake_piece("P01", (1500.0, 900.0, 700.0)), fake_piece("P02", (900.0, 700.0, 500.0))]
    alloc = allocate(pieces, job)
    # the other piece is placed; the one no block takes is said, not the whole plan refused
    assert [pl.piece_id for pl in alloc.placements] == ["P02"] and alloc.blocks_used == 1
    miss = [f for f in alloc.findings if f.code == "no-stock-block"]
    assert len(miss) == 1 and miss[0].piece == "P01" and "fits no stock" in miss[0].message
    assert miss[0].severity is Severity.ATTENTION
    # the foam bill still counts its blank (1.5 x 0.9 x 0.7 m + 0.9 x 0.7 x 0.5 m)
    assert alloc.foam_volume_m3 == pytest.approx(0.945 + 0.315)
    with pytest.raises(JobError, match="P01.*fits no stock"):  # pack alone still refuses
        pack([(p.id, tuple(p.block.size_mm)) for p in pieces], job)


def test_stock_running_out_leaves_the_rest_out_with_a_finding() -> None:
    job = job_with(StockSpec("one", (1000.0, 800.0, 600.0), 1))
    pieces = [fake_piece(f"P{i:02d}", (900.0, 700.0, 500.0)) for i in (1, 2)]
    alloc = allocate(pieces, job)
    assert [pl.piece_id for pl in alloc.placements] == ["P01"]
    miss = [f for f in alloc.findings if f.code == "no-stock-block"]
    assert [f.piece for f in miss] == ["P02"] and "runs out" in miss[0].message
    with pytest.raises(JobError, match="runs out"):
        pack([(p.id, tuple(p.block.size_mm)) for p in pieces], job)


def test_smaller_stock_kind_is_preferred() -> None:
    job = job_with(
        StockSpec("big", (4000.0, 1200.0, 1000.0), 2),
        StockSpec("small", (1000.0, 600.0, 500.0), 2),
    )
    alloc = allocate([fake_piece("P01", (900.0, 500.0, 400.0))], job)
    assert alloc.placements[0].stock == "small"
    assert alloc.per_stock == (("big", 0), ("small", 1))


@pytest.mark.parametrize("seed", range(10))
def test_random_blanks_are_disjoint_inside_and_above_the_bound(seed: int) -> None:
    rng = np.random.default_rng(seed)
    stock = StockSpec("long", (4000.0, 1200.0, 1000.0), 50)
    job = job_with(stock)
    n = int(rng.integers(5, 30))
    sizes = [tuple(rng.uniform([200, 100, 100], [3000, 1200, 1000])) for _ in range(n)]
    pieces = [fake_piece(f"P{i + 1:02d}", s, kept=0.3 * np.prod(s)) for i, s in enumerate(sizes)]
    alloc = allocate(pieces, job)
    total = sum(np.prod(s) for s in sizes) * 1e-9
    # no packing beats the volume bound ceil(total / block volume) (arithmetic)
    assert alloc.volume_lower_bound == math.ceil(total / 4.8 - 1e-9)
    assert alloc.blocks_used >= alloc.volume_lower_bound
    assert boxes_disjoint(alloc.placements)
    for pl, s in zip(alloc.placements, sizes, strict=True):
        assert np.all(pl.origin_mm >= -1e-9)
        assert np.all(pl.origin_mm + pl.size_mm <= np.array(stock.size_mm) + 1e-6)
        assert sorted(pl.size_mm) == pytest.approx(sorted(s))  # same box, turned
    # foam >= kept, waste = 1 - kept / foam (definition)
    assert alloc.foam_volume_m3 >= alloc.kept_volume_m3
    assert alloc.waste_fraction == pytest.approx(0.7)


def test_pack_keeps_input_order() -> None:
    job = job_with(StockSpec("long", (4000.0, 1200.0, 1000.0), 5))
    blanks = [("A", (100.0, 100.0, 100.0)), ("B", (3000.0, 1000.0, 900.0))]
    placements, blocks = pack(blanks, job)
    assert [p.piece_id for p in placements] == ["A", "B"]
    assert len(blocks) == 1
