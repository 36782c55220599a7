"""The layout of a strip along the sweep: where its cuts go, and its fragments.

A strip across the wire (:mod:`wirecut.pieces.split`) longer than the longest blank is cut
along the sweep into equal parts (:func:`sweep_cuts`); :func:`placed_sweep_cuts` moves those
cuts within the room the limit leaves where an equal cut would leave a sliver beyond an edge
of the outline. :func:`fragments` then joins or leaves out the parts too small for a blank of
their own: the teeth of a zigzag mesh boundary that a cut line crosses, and corners a cut
line clips (docs/methods-pieces.md).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
import shapely
from shapely.geometry import Polygon

from wirecut.config import JobProfile
from wirecut.findings import Finding, Severity
from wirecut.pieces.region import extent_along, polygons_of, strip

__all__ = [
    "FRAGMENT_SHARE",
    "sweep_cuts",
    "parts_between",
    "placed_sweep_cuts",
    "fragments",
    "fragment_finding",
]


def sweep_cuts(x0: float, x1: float, max_length_mm: float, margin_mm: float) -> np.ndarray:
    """Equal split positions (k + 1,) mm along the sweep so each part plus margins fits.

    Each part's length plus ``2 * margin_mm`` must not exceed ``max_length_mm``.
    Raises ValueError when the margins alone exceed the limit.
    """
    room = max_length_mm - 2.0 * margin_mm
    if room <= 0:
        raise ValueError("sweep margins exceed the longest blank")
    n = max(1, int(math.ceil((x1 - x0) / room - 1e-9)))
    return np.linspace(x0, x1, n + 1)


#: A polygon of the layout under this share of ``min_width_mm`` squared is a fragment: a
#: tooth of a zigzag outline that a cut line crosses, or a corner the line just clips.
FRAGMENT_SHARE = 0.25

#: Positions tried for each cut along the sweep, across the room the longest blank leaves.
_SWEEP_TRIES = 17


def parts_between(band: Any, sweep: np.ndarray, xs: np.ndarray) -> list[Polygon]:
    """The connected parts of ``band`` between consecutive sweep cuts ``xs``."""
    if len(xs) == 2:
        return polygons_of(band, min_area_mm2=1e-3)
    out = []
    for i in range(len(xs) - 1):
        out += polygons_of(strip(band, sweep, xs[i], xs[i + 1]), min_area_mm2=1e-3)
    return out


def _slivers(parts: list[Polygon], sweep: np.ndarray, job: JobProfile) -> tuple[int, int, int]:
    """(fragments, parts shorter along the sweep than the minimum width, parts): fewer is
    better, in that order."""
    w = job.pieces.min_width_mm
    small = sum(1 for p in parts if p.area < FRAGMENT_SHARE * w * w)
    lengths = [hi - lo for lo, hi in (extent_along(p, sweep) for p in parts)]
    return small, sum(1 for length in lengths if length < w), len(parts)


def placed_sweep_cuts(band: Any, sweep: np.ndarray, x0: float, x1: float, job: JobProfile,
                       limit: float) -> np.ndarray:  # fmt: skip
    """Cuts along the sweep of a strip ``band``: the fewest parts that fit ``limit``
    (:func:`sweep_cuts`), each inner cut moved within the room the limit leaves where that
    makes fewer fragments, short parts or parts (:func:`_slivers`): an equal split can fall
    a few millimetres beside an edge of the outline that runs across the sweep (a notch, a
    zigzag boundary) and leave a sliver beyond it. Left to right, each cut with the others
    held; ties keep the cut nearest its equal position."""
    margin = job.pieces.sweep_margin_mm
    xs = sweep_cuts(x0, x1, limit, margin)
    if len(xs) <= 2:
        return xs
    room = limit - 2.0 * margin
    best = _slivers(parts_between(band, sweep, xs), sweep, job)
    if best == (0, 0, len(xs) - 1):
        return xs
    for i in range(1, len(xs) - 1):
        lo = max(xs[i + 1] - room, xs[i - 1] + 1e-6)
        hi = min(xs[i - 1] + room, xs[i + 1] - 1e-6)
        if hi <= lo:
            continue
        even = xs[i]
        tries = sorted(np.linspace(lo, hi, _SWEEP_TRIES), key=lambda x: abs(x - even))
        keep = even
        for x in tries:
            trial = xs.copy()
            trial[i] = x
            score = _slivers(parts_between(band, sweep, trial), sweep, job)
            if score < best:
                best, keep = score, x
        xs[i] = keep
    return xs


def fragments(items, sweep: np.ndarray, job: JobProfile, limit_of: Callable[[float], float]):
    """(items, fragments left out). A fragment (under ``FRAGMENT_SHARE`` of the minimum width
    squared) that shares a stretch of cut line with a piece of its own strip joins it where
    the blank still fits. One that cannot join (it shares only a strip's cut line, with a
    piece of the next strip, and a blank ends at its strip's faces; or the joined blank would
    be too long) is left out: it is a tooth of a zigzag outline or a clipped corner, too
    small for a blank and a program of its own. A fragment that touches no other piece (a
    small island) stays a piece."""
    w = job.pieces.min_width_mm
    small = FRAGMENT_SHARE * w * w
    margin = job.pieces.sweep_margin_mm
    items = list(items)
    dropped: list[Polygon] = []
    for i in sorted(range(len(items)), key=lambda i: items[i][1].area):
        k, poly, a, b = items[i]
        if poly is None or poly.area >= small:
            continue
        touching = []
        bx0, by0, bx1, by1 = poly.bounds
        for j, (k2, other, _, _) in enumerate(items):
            if j == i or other is None:
                continue
            ox0, oy0, ox1, oy1 = other.bounds
            if ox0 > bx1 + 1e-6 or bx0 > ox1 + 1e-6 or oy0 > by1 + 1e-6 or by0 > oy1 + 1e-6:
                continue
            shared = shapely.intersection(poly.boundary, other.boundary).length
            if shared > 1e-6:
                touching.append((k2 == k, shared, j))
        if not touching:
            continue
        joined_into = None
        for same, _, j in sorted(touching, key=lambda t: (not t[0], -t[1], t[2])):
            if not same:
                break
            joined = shapely.union(poly, items[j][1])
            x0, x1 = extent_along(joined, sweep)
            if isinstance(joined, Polygon) and x1 - x0 + 2.0 * margin <= limit_of(b - a) + 1e-6:
                items[j] = (items[j][0], joined, items[j][2], items[j][3])
                joined_into = j
                break
        if joined_into is None:
            dropped.append(poly)
        items[i] = (k, None, a, b)
    return [it for it in items if it[1] is not None], dropped


def fragment_finding(areas: Sequence[float], job: JobProfile) -> Finding:
    """``outline-fragments`` (info): the fragments :func:`_fragments` left out (their plan
    areas, mm^2)."""
    n, w = len(areas), job.pieces.min_width_mm
    return Finding(
        "outline-fragments",
        f"{n} fragment{'s' if n > 1 else ''} of the outline ({sum(areas):.0f} mm^2 in all, "
        f"each under {FRAGMENT_SHARE * w * w:.0f} mm^2) beyond a cut line belong to no piece: "
        "teeth of a zigzag outline or corners a cut line clips, too small for a blank of "
        "their own; trim the mold's edge there or make them good by hand",
        severity=Severity.INFO,
    )
