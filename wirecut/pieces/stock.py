"""Stock allocation: the pieces' blanks cut out of the raw blocks, and the foam bill.

A raw block is cut into blanks by straight planar wire cuts, each cut going right through the
box it divides: a *guillotine* packing. Blanks are placed first-fit decreasing by volume (the
classic bin-packing heuristic, D. S. Johnson, *Near-optimal bin packing algorithms*, MIT
thesis, 1973) into a list of free boxes per opened raw block. Placing a blank of size
(p, q, r) at the corner of a free box (X, Y, Z) leaves three boxes made by three guillotine
cuts, one across each axis in some order; of the six orders the one leaving the largest box
is taken (it keeps room for the next big blank).

Orientation. A blank keeps its height vertical (the foam's rise direction and the bed of the
machine), turned about the vertical by 0 or 90 degrees. Only where a stock kind is lower than
the blank may the blank lie on its side in that kind (its height then along the block's length
or width).

Raw block axes: x along the stock's length, y along its width, z its height (``size_mm`` of
:class:`wirecut.config.StockSpec`), origin at one bottom corner, mm.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import JobError
from wirecut.findings import Finding, Severity
from wirecut.pieces.piece import Piece

__all__ = ["Placement", "RawBlock", "Allocation", "allocate", "orientations", "pack"]

_EPS = 1e-6


@dataclass(frozen=True)
class Placement:
    """Where one piece's blank comes from.

    Attributes
    ----------
    piece_id : str
    stock : str
        Name of the stock kind.
    block_index : int
        Which raw block of that kind (0, 1, ... in opening order).
    origin_mm : (3,) float, mm, raw block axes
        The blank's corner nearest the raw block's origin.
    size_mm : (3,) float, mm, raw block axes
        The blank's extent along the raw block's length, width and height (oriented).
    on_side : bool
        True when the blank lies on its side (its height is not vertical).
    """

    piece_id: str
    stock: str
    block_index: int
    origin_mm: np.ndarray
    size_mm: np.ndarray
    on_side: bool


@dataclass(frozen=True)
class RawBlock:
    """One opened raw block: ``stock`` name, ``index`` and ``size_mm (3,)`` mm (length, width,
    height)."""

    stock: str
    index: int
    size_mm: np.ndarray


@dataclass(frozen=True)
class Allocation:
    """The blanks in the raw blocks and the foam bill.

    Attributes
    ----------
    placements : tuple of Placement
        One per piece, in the pieces' order.
    blocks : tuple of RawBlock
        Raw blocks opened, in opening order.
    blocks_used : int
    per_stock : tuple of (str, int)
        Blocks used per stock kind, in the profile's order.
    foam_volume_m3 : float
        Volume of the raw blanks cut from the stock (sum of the blank boxes), m^3.
    raw_volume_m3 : float
        Volume of the raw blocks opened, m^3.
    kept_volume_m3 : float
        Foam that stays in the mold pieces: under the target surface down to the base plane,
        m^3 (from ``piece.extra["kept_volume_mm3"]``).
    waste_fraction : float
        ``1 - kept / foam``.
    volume_lower_bound : int
        ``ceil(total blank volume / volume of the largest stock kind)``: no packing uses fewer
        blocks.
    findings : tuple of Finding
    """

    placements: tuple[Placement, ...]
    blocks: tuple[RawBlock, ...]
    blocks_used: int
    per_stock: tuple[tuple[str, int], ...]
    foam_volume_m3: float
    raw_volume_m3: float
    kept_volume_m3: float
    waste_fraction: float
    volume_lower_bound: int
    findings: tuple[Finding, ...]


def orientations(
    blank: tuple[float, float, float], stock_height: float
) -> list[tuple[np.ndarray, bool]]:
    """Allowed orientations of a blank (along sweep, along wire, height) in a stock kind.

    Returns (size (3,) mm in raw block axes, on_side) pairs: upright turned 0 or 90 degrees;
    when the blank is higher than ``stock_height``, also the four ways of lying on a side.
    """
    a, b, c = (float(v) for v in blank)
    out = [(np.array([a, b, c]), False), (np.array([b, a, c]), False)]
    if c > stock_height + _EPS:
        for p in ((a, c, b), (c, a, b), (b, c, a), (c, b, a)):
            out.append((np.array(p), True))
    return out


def _fits(size: np.ndarray, box: np.ndarray) -> bool:
    return bool(np.all(size <= box + _EPS))


def _split(origin: np.ndarray, box: np.ndarray, size: np.ndarray) -> list[tuple]:
    """Free boxes left after placing ``size`` at ``origin`` of a free box ``box``: three
    guillotine cuts, in the axis order that leaves the largest box."""
    best = None
    for order in itertools.permutations(range(3)):
        extent = box.copy()
        boxes = []
        for axis in order:
            rest = extent.copy()
            rest[axis] = box[axis] - size[axis]
            o = origin.copy()
            o[axis] += size[axis]
            if rest[axis] > _EPS:
                boxes.append((o, rest))
            extent[axis] = size[axis]
        largest = max((float(np.prod(s)) for _, s in boxes), default=0.0)
        if best is None or largest > best[0] + _EPS:
            best = (largest, boxes)
    return best[1]


def pack(
    blanks: list[tuple[str, tuple[float, float, float]]], job: JobProfile
) -> tuple[list[Placement], list[RawBlock]]:
    """Guillotine first-fit decreasing packing of blanks into the job's stock.

    Parameters
    ----------
    blanks : list of (id, (along sweep, along wire, height) mm)
    job : JobProfile
        ``job.stock``: kinds, sizes and counts on hand.

    Returns
    -------
    placements (in the input order), blocks opened

    Raises
    ------
    JobError
        A blank fits no stock kind, or the stock on hand runs out.
    """
    placements, opened, left_out = _pack(blanks, job)
    if left_out:
        raise JobError(left_out[0][1])
    return placements, opened


def _pack(
    blanks: list[tuple[str, tuple[float, float, float]]], job: JobProfile
) -> tuple[list[Placement], list[RawBlock], list[tuple[str, str]]]:
    """:func:`pack` that goes on past a blank it cannot place: the placements of the blanks
    placed (in the input order), the blocks opened, and (id, why) of each blank left out."""
    kinds = {s.name: s for s in job.stock}
    used = {s.name: 0 for s in job.stock}
    left_out: list[tuple[str, str]] = []
    opened: list[RawBlock] = []
    free: list[list[tuple[np.ndarray, np.ndarray]]] = []
    placed: dict[str, Placement] = {}
    order = sorted(range(len(blanks)), key=lambda i: (-float(np.prod(blanks[i][1])), i))
    for i in order:
        pid, size = blanks[i]
        spot = None
        for bi, block in enumerate(opened):
            options = orientations(size, kinds[block.stock].size_mm[2])
            for fi, (_o, box) in enumerate(free[bi]):
                for s, side in options:
                    if _fits(s, box):
                        spot = (bi, fi, s, side)
                        break
                if spot:
                    break
            if spot:
                break
        if spot is None:
            fitting = []
            for kind in job.stock:
                dims = np.asarray(kind.size_mm, float)
                if any(_fits(s, dims) for s, _ in orientations(size, kind.size_mm[2])):
                    fitting.append(kind)
            if not fitting:
                stock = "; ".join(
                    f"{k.name} {k.size_mm[0]:g} x {k.size_mm[1]:g} x {k.size_mm[2]:g} mm"
                    for k in job.stock
                )
                why = (
                    f"piece {pid}: blank {size[0]:.0f} x {size[1]:.0f} x {size[2]:.0f} mm "
                    f"(sweep x wire x height) fits no stock block ({stock})"
                )
                left_out.append((pid, why))
                continue
            left = [k for k in fitting if used[k.name] < k.count]
            if not left:
                names = ", ".join(f"{k.count} {k.name!r}" for k in fitting)
                why = (
                    f"piece {pid}: the stock runs out (all {names} blocks used) before the blank "
                    f"{size[0]:.0f} x {size[1]:.0f} x {size[2]:.0f} mm is placed"
                )
                left_out.append((pid, why))
                continue
            kind = min(left, key=lambda k: (float(np.prod(k.size_mm)), job.stock.index(k)))
            block = RawBlock(kind.name, used[kind.name], np.asarray(kind.size_mm, float))
            used[kind.name] += 1
            opened.append(block)
            free.append([(np.zeros(3), block.size_mm.copy())])
            bi = len(opened) - 1
            options = orientations(size, kind.size_mm[2])
            s, side = next((s, side) for s, side in options if _fits(s, block.size_mm))
            spot = (bi, 0, s, side)
        bi, fi, s, side = spot
        o, box = free[bi].pop(fi)
        placed[pid] = Placement(pid, opened[bi].stock, opened[bi].index, o.copy(), s, side)
        free[bi].extend(_split(o, box, s))
        # lowest, then nearest the origin first: keeps blanks stacked from the bottom
        free[bi].sort(key=lambda ob: (ob[0][2], ob[0][1], ob[0][0]))
    return [placed[pid] for pid, _ in blanks if pid in placed], opened, left_out


def allocate(pieces: list[Piece] | tuple[Piece, ...], job: JobProfile) -> Allocation:
    """Allocate every piece's blank (``Block.size_mm``) to the raw blocks of ``job.stock``.

    Parameters
    ----------
    pieces : sequence of Piece
        Their ``block.size_mm`` (along sweep, along wire, height, mm) and, for the kept
        volume, ``extra["kept_volume_mm3"]``.
    job : JobProfile

    Returns
    -------
    Allocation
        A blank that fits no stock kind, or finds the stock run out, is left out of the
        placements with a ``no-stock-block`` finding naming the piece, its size and the
        stock; the foam bill still counts its blank.
    """
    blanks = [(p.id, tuple(float(v) for v in p.block.size_mm)) for p in pieces]
    placements, blocks, left_out = _pack(blanks, job)
    # a blank no block takes is the fabricator's to solve (a larger kind, more blocks, a
    # thinner base): said, and the rest of the plan made, not the whole plan refused
    findings: list[Finding] = [
        Finding("no-stock-block", f"{why}: add a larger stock kind or more blocks", piece=pid)
        for pid, why in left_out
    ]
    foam = sum(float(np.prod(b)) for _, b in blanks) * 1e-9
    raw = sum(float(np.prod(b.size_mm)) for b in blocks) * 1e-9
    kept_mm3 = 0.0
    missing = []
    for p in pieces:
        extra = p.extra if isinstance(p.extra, dict) else {}
        v = extra.get("kept_volume_mm3")
        if v is None or not math.isfinite(float(v)):
            missing.append(p.id)
        else:
            kept_mm3 += float(v)
    if missing:
        findings.append(
            Finding(
                "kept-volume-unknown",
                f"no kept volume for {', '.join(missing)}: the foam bill leaves them out",
                severity=Severity.INFO,
            )
        )
    kept = kept_mm3 * 1e-9
    for pl in placements:
        if pl.on_side:
            findings.append(
                Finding(
                    "blank-on-side",
                    f"the blank lies on its side in a {pl.stock!r} block (it is higher than "
                    "the stock): the foam's rise direction is horizontal in this piece",
                    piece=pl.piece_id,
                    severity=Severity.INFO,
                )
            )
    largest = max(float(np.prod(s.size_mm)) for s in job.stock) * 1e-9
    bound = int(math.ceil(foam / largest - 1e-9)) if foam > 0 else 0
    per_stock = tuple((s.name, sum(1 for b in blocks if b.stock == s.name)) for s in job.stock)
    return Allocation(
        placements=tuple(placements),
        blocks=tuple(blocks),
        blocks_used=len(blocks),
        per_stock=per_stock,
        foam_volume_m3=foam,
        raw_volume_m3=raw,
        kept_volume_m3=kept,
        waste_fraction=1.0 - kept / foam if foam > 0 else 0.0,
        volume_lower_bound=bound,
        findings=tuple(findings),
    )
