"""Benchmark: the ruled fit of one piece (sampling, fit, deviation), not a test.

A 1 m x 1 m piece of a doubly curved panel, y = 2e-4 (x - 500)(z - 500) - (x - 500)^2 / 6000
- (z - 500)^2 / 20000 (a saddle with a sag both ways), tolerance 0.5 mm, balanced. Tables:

1. ``fit_cut`` on analytic samples, 10k to 1M samples: wall time (untraced run), peak traced
   memory (a second run under tracemalloc, numpy buffers included), rulings, LP rounds plus
   least-squares evaluations, max deviation;
2. ``fit_cut`` at a fixed 100k samples for a growing ruling count (``ruling_spacing_mm``);
3. the whole piece from a mesh of ~100k triangles: ``sample_target`` then ``fit_cut``;
4. ``signed_deviation`` alone for 1M samples.

Run: ``.venv/bin/python bench/bench_fit.py`` (``--quick`` stops at 100k samples).
"""

from __future__ import annotations

import math
import sys
import time
import tracemalloc

import numpy as np

from wirecut.config import ToleranceSpec
from wirecut.ruled.deviation import signed_deviation
from wirecut.ruled.fit import fit_cut
from wirecut.ruled.sampling import TargetSamples, sample_target

TOL = ToleranceSpec(0.5)


def height(x, z):
    return 300.0 + 2e-4 * (x - 500) * (z - 500) - (x - 500) ** 2 / 6000 - (z - 500) ** 2 / 20000


def analytic_samples(n: int) -> TargetSamples:
    side = max(int(round(math.sqrt(n))), 2)
    g = np.linspace(0.0, 1000.0, side)
    x, z = (a.ravel() for a in np.meshgrid(g, g, indexing="ij"))
    y = height(x, z)
    e = 1e-3
    fx = (height(x + e, z) - height(x - e, z)) / (2 * e)
    fz = (height(x, z + e) - height(x, z - e)) / (2 * e)
    nrm = np.column_stack([-fx, np.ones_like(x), -fz])
    g2 = np.linalg.norm(nrm, axis=1)
    pts = np.column_stack([x, y, z])
    w = (1000.0 / (side - 1)) ** 2 * g2
    return TargetSamples(
        pts,
        nrm / g2[:, None],
        w,
        np.zeros(len(x), bool),
        pts[:, [0, 2]],
        np.zeros(len(x), int),
        1000.0 / (side - 1),
    )


class _Mesh:
    def __init__(self, triangles: int):
        cells = max(int(round(math.sqrt(triangles / 2))), 2)
        g = np.linspace(0.0, 1000.0, cells + 1)
        x, y = (a.ravel() for a in np.meshgrid(g, g, indexing="ij"))
        # part frame with up = +z; identity to machine would put height on z, so the mesh is
        # built directly as (x, z_machine, height) and mapped by a fixed rotation below
        self.vertices = np.column_stack([x, y, height(x, y)])
        idx = np.arange(len(g) ** 2).reshape(len(g), len(g))
        a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
        c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
        self.faces = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
        t = self.vertices[self.faces]
        n = np.cross(t[:, 1] - t[:, 0], t[:, 2] - t[:, 0])
        n /= np.linalg.norm(n, axis=1)[:, None]
        self.face_normals = n * np.sign(n[:, 2])[:, None]
        self.up = np.array([0.0, 0.0, 1.0])


# part (x, y, up) -> machine (x = part x, y = up, z = part y)
PART_TO_MACHINE = np.array([[1.0, 0, 0, 0], [0, 0, 1.0, 0], [0, 1.0, 0, 0], [0, 0, 0, 1.0]])


def measure(fn):
    """(result, wall time s of an untraced run, peak traced MiB of a second, traced run)."""
    t0 = time.perf_counter()
    out = fn()
    dt = time.perf_counter() - t0
    tracemalloc.start()
    fn()
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return out, dt, peak


def main(quick: bool = False) -> None:
    sizes = [10_000, 100_000] + ([] if quick else [1_000_000])
    print("1. fit_cut on analytic samples (1 m x 1 m, tol 0.5 mm, balanced)")
    print(
        f"{'samples':>9} {'rulings':>8} {'time s':>8} {'peak MiB':>9} {'LP+LM it':>9} "
        f"{'max dev mm':>11} {'skewed':>7}"
    )
    for n in sizes:
        s = analytic_samples(n)
        fit, dt, peak = measure(lambda s=s: fit_cut(s, 0.0, 1000.0, np.eye(4), TOL))
        print(
            f"{len(s):>9} {fit.n_rulings:>8} {dt:>8.2f} {peak:>9.1f} {fit.iterations:>9} "
            f"{fit.report.max_abs_mm:>11.4f} {str(fit.skewed):>7}"
        )
    print("\n2. fit_cut at 100k samples, growing ruling count")
    print(f"{'rulings':>8} {'time s':>8} {'peak MiB':>9} {'max dev mm':>11}")
    s = analytic_samples(100_000)
    for spacing in (100.0, 40.0, 20.0, 10.0, 5.0):
        fit, dt, peak = measure(
            lambda sp=spacing: fit_cut(s, 0.0, 1000.0, np.eye(4), TOL, ruling_spacing_mm=sp)
        )
        print(f"{fit.n_rulings:>8} {dt:>8.2f} {peak:>9.1f} {fit.report.max_abs_mm:>11.4f}")
    print("\n3. one piece from a mesh: sample_target + fit_cut")
    print(
        f"{'triangles':>10} {'samples':>9} {'sample s':>9} {'fit s':>7} {'peak MiB':>9} "
        f"{'max dev mm':>11}"
    )
    for tri in [20_000, 100_000]:
        mesh = _Mesh(tri)
        smp, t_s, p1 = measure(lambda m=mesh: sample_target(m, PART_TO_MACHINE, spacing_mm=8.0))
        fit, t_f, p2 = measure(lambda s=smp: fit_cut(s, 0.0, 1000.0, PART_TO_MACHINE, TOL))
        print(
            f"{len(mesh.faces):>10} {len(smp):>9} {t_s:>9.2f} {t_f:>7.2f} {max(p1, p2):>9.1f} "
            f"{fit.report.max_abs_mm:>11.4f}"
        )
    print("\n4. signed_deviation alone")
    big = analytic_samples(100_000 if quick else 1_000_000)
    fit = fit_cut(analytic_samples(100_000), 0.0, 1000.0, np.eye(4), TOL)
    _, dt, peak = measure(lambda: signed_deviation(fit.cut, big, TOL))
    print(f"{len(big)} samples, {fit.n_rulings} rulings: {dt:.3f} s, peak {peak:.1f} MiB")


if __name__ == "__main__":
    main(quick="--quick" in sys.argv)
