"""Benchmark: the min-max LP of a fit, our row generation against one whole LP (not a test).

The equal-error step of a fit (``wirecut.ruled.minimax.equal_error``) solved two ways on the
same problems: row generation in one live HiGHS model (``highspy``, the project's way) and the
whole LP over every sample at once in ``scipy.optimize.linprog`` (HiGHS too, the library's
plain way). The problems are strip models like a fit's: n samples in K - 1 strips with
bilinear weights, heights of a smooth surface plus noise, for the sizes of the benchmark
panel's fits (a coarse fit of a strip: about 10k samples and 50 rulings; a final fit: about
15k samples and 20-40 rulings). Both must reach the same largest bound E.

Run: ``.venv/bin/python bench/bench_minimax.py``
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests" / "ruled"))

from test_minimax import _problem, _whole_lp  # noqa: E402  (the test's problem builder)

from wirecut.config import Policy  # noqa: E402
from wirecut.ruled.minimax import equal_error  # noqa: E402


def main() -> None:
    rows = []
    for n, k in ((3_000, 20), (10_000, 50), (15_000, 30), (40_000, 60)):
        t_rg = t_lp = 0.0
        worst = 0.0
        reps = 5
        for seed in range(reps):
            a, yt, ny, cell, truth, strip = _problem(seed, n=n, k=k)
            t0 = time.perf_counter()
            _, eps, _ = equal_error(a, yt, ny, cell, truth, Policy.BALANCED, tol=0.5)
            t_rg += time.perf_counter() - t0
            t0 = time.perf_counter()
            whole = _whole_lp(a, yt, ny, strip, Policy.BALANCED)
            t_lp += time.perf_counter() - t0
            worst = max(worst, abs(eps - whole.x[-1]))
        rows.append((n, k, 1e3 * t_rg / reps, 1e3 * t_lp / reps, t_lp / t_rg, worst))
    print(
        "| samples | rulings | row generation ms | whole LP (linprog) ms | ratio "
        "| max |E diff| mm |"
    )
    print("|---|---|---|---|---|---|")
    for n, k, a, b, r, d in rows:
        print(f"| {n:,} | {k} | {a:.1f} | {b:.1f} | {r:.1f} | {d:.1e} |")


if __name__ == "__main__":
    main()
