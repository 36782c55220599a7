"""Roughness: the scatter of a mesh's vertices about smooth local fits.

Noise of a known standard deviation is added by construction (seeded, normal, along the
surface's normals); the residual mean square of a least-squares fit is an unbiased estimate of
the noise variance (Gauss-Markov; Seber and Lee, *Linear Regression Analysis*, sec. 3.3), so
the estimate must come back to the seeded sigma.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import trimesh
from shapes import cylinder, graph_surface, icosphere, jittered_graph, saddle
from typer.testing import CliRunner

from wirecut.cli import app
from wirecut.config import default_job
from wirecut.geometry.curvature import vertex_curvature
from wirecut.geometry.mesh import target_from_arrays
from wirecut.geometry.roughness import ROUGH_SHARE, Roughness, roughness_finding

JOB = default_job()


def _rough(v, f) -> Roughness:
    target, _ = target_from_arrays(v, f, JOB)
    return vertex_curvature(target).roughness


def _noisy(v, f, sigma: float, seed: int = 7) -> np.ndarray:
    m = trimesh.Trimesh(v, f, process=False)
    n = np.asarray(m.vertex_normals)
    return v + n * np.random.default_rng(seed).normal(0.0, sigma, (len(v), 1))


def _panel(nx: int = 101, ny: int = 51):
    """A doubly curved panel z = 150 sin(pi x / 6000) sin(pi y / 3000), 2 m x 1 m of it."""
    return jittered_graph(
        lambda x, y: 150.0 * np.sin(np.pi * (x + 3000) / 6000) * np.sin(np.pi * (y + 1500) / 3000),
        1000.0, 500.0, nx, ny,
    )  # fmt: skip


@pytest.mark.parametrize("sigma", [0.02, 0.1, 0.4])
@pytest.mark.parametrize(
    "shape",
    [
        "panel",
        "sphere",  # R = 500 mm, closed
        "saddle",  # z = x y / 2000, doubly ruled
    ],
)
def test_seeded_noise_is_recovered(shape, sigma):
    v, f = {
        "panel": _panel,
        "sphere": lambda: icosphere(500.0, 5),
        "saddle": lambda: saddle(n=81),
    }[shape]()
    r = _rough(_noisy(v, f, sigma), f)
    assert r.samples > 1000
    # the median's standard error is about 1 % here; 5 % leaves room for the normals' noise
    assert r.rms_mm == pytest.approx(sigma, rel=0.05)


@pytest.mark.parametrize(
    "name, mesh, limit_mm",
    [
        # a smooth sine wave meshed at 25 mm, every vertex on the surface (a quadric fit read
        # it 0.15 mm rough; the cubic's misfit is its quartic terms)
        (
            "wave",
            lambda: graph_surface(lambda x, y: 120 * np.sin(2 * np.pi * x / 1000), 500, 41),
            0.01,
        ),
        ("panel", _panel, 0.001),
        ("saddle", lambda: saddle(n=81), 1e-4),
        # vertices on a cylinder of R = 500 mm, 32 facets over a half turn (chord height
        # c = R (1 - cos(pi / 64)) = 0.60 mm): about 17 c^2 / R = 0.012 mm (module docstring)
        ("cylinder", lambda: cylinder(500.0, 1000.0, 33, 21), 0.02),
    ],
)
def test_smooth_meshes_read_smooth(name, mesh, limit_mm):
    r = _rough(*mesh())
    assert r.rms_mm < limit_mm
    assert roughness_finding(r, JOB.tolerance.surface_mm) is None


def test_creases_do_not_count():
    """A folded plate (two planes meeting at a 30 degree fold): the crease vertices are left
    out by the curvature's crease cut, and every other 2-ring sees one plane."""
    v, f = graph_surface(lambda x, y: 0.27 * np.abs(x), 500.0, 61)
    assert _rough(v, f).rms_mm < 1e-6


def test_finding_threshold():
    tol = JOB.tolerance.surface_mm
    edge = ROUGH_SHARE * tol / 3.0  # three standard deviations at that share of the tolerance
    assert roughness_finding(Roughness(edge * 0.99, 100), tol) is None
    f = roughness_finding(Roughness(edge * 1.01, 100), tol)
    assert f is not None and f.code == "rough-mesh" and f.severity.value == "attention"
    assert roughness_finding(Roughness(float("nan"), 0), tol) is None
    assert roughness_finding(None, tol) is None


def test_check_reports_roughness(tmp_path):
    v, f = _panel()
    noisy = tmp_path / "noisy.stl"
    trimesh.Trimesh(_noisy(v, f, 0.2), f, process=False).export(noisy)
    out = tmp_path / "c.json"
    res = CliRunner().invoke(app, ["check", str(noisy), "--json", str(out)])
    assert res.exit_code == 1  # an attention finding
    assert "rough-mesh" in res.output and "0.20 mm RMS" in res.output
    data = json.loads(out.read_text())
    assert data["analysis"]["roughness_rms_mm"] == pytest.approx(0.2, rel=0.05)


def test_plan_reports_roughness(tmp_path):
    """``plan`` says so too (a small noisy dish, 0.3 mm of noise against 0.5 mm)."""
    v, f = jittered_graph(lambda x, y: 300.0 - (x * x + y * y) / 8000.0, 300.0, 200.0, 31, 21)
    noisy = tmp_path / "dish.stl"
    trimesh.Trimesh(_noisy(v, f, 0.3), f, process=False).export(noisy)
    out = tmp_path / "plan"
    res = CliRunner().invoke(app, ["plan", str(noisy), "--out", str(out), "--quiet"])
    assert res.exit_code == 1, res.output
    data = json.loads((out / "plan.json").read_text())
    rough = [x for x in data["findings"] if x["code"] == "rough-mesh"]
    assert len(rough) == 1 and rough[0]["piece"] is None
    assert data["analysis"]["roughness_rms_mm"] == pytest.approx(0.3, rel=0.1)
