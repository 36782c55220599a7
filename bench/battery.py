"""A battery of varied seeded parts, planned one by one: a hardening check, not a test.

    python bench/battery.py [--count 24] [--seed 500] [--job JOB.toml] [--keep DIR]

Each part is a height field of random smooth terms (Gaussian bumps, waves, tilts, twists,
cylinders), with up to two creases (folds, steps, ridges), on an outline that is a rectangle,
an ellipse, an L, a ring or two panels, meshed on a jittered or plain grid whose boundary
zigzags where the outline cuts the grid (the outline keeps the triangles whose centroids lie
inside it), turned at random in plan. Sizes run from 0.3 m to 6 m and heights up to 15 % of the
part's length, so some parts cannot be cut within tolerance at all: the battery looks for
crashes, refusals, pieces without programs and fits that come out worse than they should,
not for a clean sheet. Each plan runs as ``wirecut plan`` in a fresh process; the table gives
the exit code, the time, the pieces (with a program), the largest replayed deviation, the
feasible share and the count of each finding code (plan.json does not carry severities:
docs/findings.md gives them).
"""

from __future__ import annotations

import argparse
import collections
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

PY = sys.executable


def _height(rng, lx: float, ly: float):
    amp = rng.uniform(10, 0.15 * max(lx, ly))
    terms = [
        (rng.choice(["gauss", "sine", "tilt", "twist", "cyl"]), rng.uniform(-1, 1, 6))
        for _ in range(rng.integers(1, 4))
    ]
    feats = [
        (rng.choice(["fold", "step", "ridge"]), rng.uniform(-1, 1, 4))
        for _ in range(rng.integers(0, 3))
    ]

    def f(x, y):
        z = np.zeros_like(x)
        for kind, p in terms:
            if kind == "gauss":
                cx, cy, s = p[0] * lx / 2, p[1] * ly / 2, (0.3 + abs(p[2])) * min(lx, ly)
                z += amp * p[3] * np.exp(-((x - cx) ** 2 + (y - cy) ** 2) / (2 * s * s))
            elif kind == "sine":
                wl, ang = (0.5 + abs(p[0]) * 2) * max(lx, ly), p[1] * np.pi
                z += amp * 0.5 * p[2] * np.sin(2 * np.pi * (x * np.cos(ang) + y * np.sin(ang)) / wl)
            elif kind == "tilt":
                z += amp * (p[0] * x / lx + p[1] * y / ly) * 0.5
            elif kind == "cyl":
                ang, r = p[0] * np.pi, (1.0 + 3 * abs(p[1])) * max(lx, ly)
                u = -x * np.sin(ang) + y * np.cos(ang)
                z += np.sign(p[2] + 1e-9) * (r - np.sqrt(np.maximum(r * r - u * u, 0)))
            else:
                z += amp * p[0] * x * y / (lx * ly) * 2
        for kind, p in feats:
            ang, c = p[0] * np.pi, p[1] * 0.4
            u = (x * np.cos(ang) + y * np.sin(ang)) / max(lx, ly)
            if kind == "fold":
                z += amp * 0.3 * p[2] * np.abs(u - c)
            elif kind == "step":
                z += amp * 0.2 * p[2] * np.clip((u - c) / 0.01, 0, 1)
            else:
                z -= amp * 0.3 * abs(p[2]) * np.abs(u - c)
        return z + 300.0

    return f, [str(t[0]) for t in terms], [str(t[0]) for t in feats]


def part(seed: int, path: Path) -> dict:
    """Write the battery's part ``seed`` as STL to ``path``; returns what it is."""
    import trimesh
    from scipy.spatial import Delaunay

    rng = np.random.default_rng(seed)
    lx, ly = rng.uniform(300, 6000), rng.uniform(300, 3000)
    f, terms, feats = _height(rng, lx, ly)
    outline = str(rng.choice(["rect", "rect", "ellipse", "L", "ring", "two"]))
    kind = str(rng.choice(["jitter", "grid", "fine"]))
    edges = {"jitter": rng.uniform(15, 60), "grid": rng.uniform(15, 60), "fine": rng.uniform(6, 15)}
    edge = edges[kind]
    edge = max(edge, np.sqrt(lx * ly / 150000))
    nx, ny = max(int(lx / edge), 8), max(int(ly / edge), 8)
    x, y = np.meshgrid(np.linspace(-lx / 2, lx / 2, nx), np.linspace(-ly / 2, ly / 2, ny))
    if kind == "jitter":
        inner = (np.abs(x) < lx / 2 - 1e-9) & (np.abs(y) < ly / 2 - 1e-9)
        x = x + inner * rng.uniform(-0.3, 0.3, x.shape) * lx / (nx - 1)
        y = y + inner * rng.uniform(-0.3, 0.3, y.shape) * ly / (ny - 1)
    xy = np.column_stack([x.ravel(), y.ravel()])
    tri = Delaunay(xy).simplices
    c = xy[tri].mean(axis=1)
    ex, ey = c[:, 0] / (lx / 2), c[:, 1] / (ly / 2)
    keep = {
        "ellipse": ex**2 + ey**2 < 1,
        "L": ~((ex > 0) & (ey > 0)),
        "ring": ex**2 + ey**2 > 0.2,
        "two": np.abs(ex) > 0.15,
    }.get(outline, np.ones(len(tri), bool))
    v = np.column_stack([xy, f(xy[:, 0], xy[:, 1])])
    ang = rng.uniform(0, np.pi)
    rot = np.array([[np.cos(ang), -np.sin(ang)], [np.sin(ang), np.cos(ang)]])
    v[:, :2] = v[:, :2] @ rot.T
    mesh = trimesh.Trimesh(v, tri[keep], process=False)
    mesh.remove_unreferenced_vertices()
    mesh.export(path)
    return {
        "size_mm": [round(lx), round(ly)],
        "outline": outline,
        "mesh": kind,
        "terms": terms,
        "creases": feats,
        "faces": len(mesh.faces),
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=24)
    ap.add_argument("--seed", type=int, default=500, help="seed of the first part")
    ap.add_argument("--job", type=Path, default=None, help="job profile (default: bundled)")
    ap.add_argument("--keep", type=Path, default=None, help="keep meshes and plans here")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="wirecut-battery-") as tmp:
        work = args.keep or Path(tmp)
        work.mkdir(parents=True, exist_ok=True)
        print("| part | size mm | outline | mesh | creases | faces | exit | s | pieces | "
              "with program | max dev mm | feasible | findings |")  # fmt: skip
        print("|---|---|---|---|---|---|---|---|---|---|---|---|---|")
        for k in range(args.count):
            name = f"b{k:02d}"
            mesh = work / f"{name}.stl"
            info = part(args.seed + k, mesh)
            cmd = [PY, "-m", "wirecut.cli", "plan", str(mesh), "--out", str(work / name),
                   "--quiet"] + (["--job", str(args.job)] if args.job else [])  # fmt: skip
            t0 = time.perf_counter()
            run = subprocess.run(cmd, capture_output=True, text=True, timeout=900)
            wall = time.perf_counter() - t0
            cells = ["-"] * 5
            if run.returncode != 2 and (work / name / "plan.json").exists():
                plan = json.loads((work / name / "plan.json").read_text())
                s = plan["summary"]
                codes = collections.Counter(f["code"] for f in plan["findings"])
                cells = [
                    str(s["pieces"]),
                    str(sum(1 for p in plan["pieces"] if p.get("gcode"))),
                    f"{s['max_deviation_mm']:.3f}",
                    f"{s['feasible_area_fraction']:.3f}",
                    ", ".join(f"{c} {n}" for c, n in sorted(codes.items())),
                ]
            elif run.stderr.strip():
                cells[-1] = run.stderr.strip().splitlines()[-1][:120]
            size = "x".join(str(v) for v in info["size_mm"])
            print(f"| {name} | {size} | {info['outline']} | {info['mesh']} | "
                  f"{' '.join(info['creases']) or '-'} | {info['faces']} | {run.returncode} | "
                  f"{wall:.1f} | " + " | ".join(cells) + " |", flush=True)  # fmt: skip


if __name__ == "__main__":
    main()
