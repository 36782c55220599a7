"""Splitting the mold into pieces: strips across the wire, splits along the sweep, blocks.

The wire direction fixed, a piece is a strip of the footprint between two planes perpendicular
to the wire (its two block end faces), possibly split along the sweep when it is longer than
the stock or the machine travel allow. Every strip must be cuttable within tolerance by one
ruled cut.

Fewest strips. Let ``F(a, b)`` say whether the strip between wire coordinates ``a < b`` can be
cut within tolerance. F is monotone: a strip inside a feasible strip is feasible (the same cut
restricted to it fits at least as well). For monotone F the greedy sweep that starts at the
footprint's edge and takes, each time, the widest feasible strip gives the fewest strips: by
induction its k-th cut lies at least as far as the k-th cut of any feasible cover ("greedy
stays ahead", the exchange argument of interval scheduling, J. Kleinberg and E. Tardos,
*Algorithm Design*, 2006, ch. 4.1). The widest strip is found by bisection on a grid of step
``resolution_mm`` from the strip start, so the result is optimal among covers whose cuts lie on
that grid (``tests/pieces/test_split_greedy.py`` checks this against exhaustive search).

Where even a strip of ``pieces.min_width_mm`` fails tolerance, a min-width strip is kept,
marked infeasible, and its area reported as an attention finding.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

__all__ = ["StripPlan", "greedy_strips", "sweep_cuts", "strip_count_bound"]


@dataclass(frozen=True)
class StripPlan:
    """Cut positions across the wire.

    Attributes
    ----------
    cuts : (n + 1,) float, mm, plan coordinate along the wire
        Strip k lies between ``cuts[k]`` and ``cuts[k + 1]``; ``cuts[0]`` is the footprint's
        start. The last strip may end beyond the footprint when it had to be widened to the
        minimum width.
    feasible : (n,) bool
        False for a strip where even the minimum width failed tolerance.
    evaluations : int
        How many times the feasibility oracle was asked.
    """

    cuts: np.ndarray
    feasible: np.ndarray
    evaluations: int

    @property
    def count(self) -> int:
        """Number of strips."""
        return len(self.feasible)


def greedy_strips(
    lo: float,
    hi: float,
    feasible: Callable[[float, float], bool],
    max_width_mm: float,
    min_width_mm: float,
    resolution_mm: float,
    progress: Callable[[str], None] | None = None,
) -> StripPlan:
    """Fewest strips covering ``[lo, hi]`` whose every strip passes ``feasible``.

    Parameters
    ----------
    lo, hi : float, mm
        Extent of the footprint along the wire.
    feasible : callable (a, b) -> bool
        The oracle: can the strip between a and b (mm) be cut within tolerance. Must be
        monotone (true for a strip implies true for every sub-strip) for the count to be the
        fewest.
    max_width_mm, min_width_mm : float, mm
        Widest and narrowest strip the machine and the stock allow.
    resolution_mm : float, mm
        Grid step of the bisection; cuts lie at ``a + k * resolution_mm`` from each strip's
        start (the last one is clamped to ``hi``).
    progress : callable (str) -> None, optional
        Told about each strip found.

    Returns
    -------
    StripPlan
    """
    if not (max_width_mm >= min_width_mm > 0 and resolution_mm > 0):
        raise ValueError("greedy_strips needs max_width >= min_width > 0 and resolution > 0")
    step = float(resolution_mm)
    k_min = max(1, int(math.ceil(min_width_mm / step - 1e-9)))
    k_max = max(k_min, int(math.floor(max_width_mm / step + 1e-9)))
    cuts = [float(lo)]
    ok: list[bool] = []
    calls = 0

    def ask(a: float, b: float) -> bool:
        nonlocal calls
        calls += 1
        return bool(feasible(a, b))

    a = float(lo)
    while hi - a > 1e-9:
        rest = hi - a
        if rest <= k_max * step + 1e-9 and ask(a, hi):
            # the rest fits in one strip (widened to the minimum width if narrower)
            cuts.append(max(hi, a + k_min * step) if rest < min_width_mm else hi)
            ok.append(True)
            break
        top = min(k_max, int(math.ceil(rest / step - 1e-9)) - 1)
        if top < k_min or not ask(a, a + k_min * step):
            b = a + k_min * step
            cuts.append(b)
            ok.append(False)
            if progress is not None:
                progress(f"strip {len(ok)}: {a:.1f}..{b:.1f} mm fails tolerance at min width")
            a = b
            continue
        # largest k in [k_min, top] with feasible(a, a + k step): bisection
        good, bad = k_min, top + 1
        if ask(a, a + top * step):
            good = top
        else:
            bad = top
            while bad - good > 1:
                mid = (good + bad) // 2
                if ask(a, a + mid * step):
                    good = mid
                else:
                    bad = mid
        b = a + good * step
        cuts.append(b)
        ok.append(True)
        if progress is not None:
            progress(f"strip {len(ok)}: {a:.1f}..{b:.1f} mm")
        a = b
    return StripPlan(np.asarray(cuts, float), np.asarray(ok, bool), calls)


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


def strip_count_bound(
    extent_mm: float, reach_mm: Sequence[float] | np.ndarray | None, max_width_mm: float
) -> int:
    """Lower bound on the strip count: extent across the wire over the p95 wire reach.

    The reach of a strip cannot exceed the wire reach of most of its points, and never the
    widest block; the 95th percentile (not the median) keeps the bound a bound when a few
    regions are easier than the rest. NaN reaches are ignored.
    """
    w = float(max_width_mm)
    if reach_mm is not None:
        r = np.asarray(reach_mm, float)
        r = r[np.isfinite(r) & (r > 0)]
        if r.size:
            w = min(w, float(np.percentile(r, 95)))
    return max(1, int(math.ceil(extent_mm / w - 1e-9)))
