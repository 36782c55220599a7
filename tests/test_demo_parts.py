"""The demo scenario: stored meshes reproduce and load, sizes as documented, the profile loads."""

from __future__ import annotations

import importlib.util
import sys
import tomllib
from dataclasses import fields
from pathlib import Path

import numpy as np
import pytest
import trimesh

from wirecut.config import MachineSpec, PieceRules, ToleranceSpec, WireSpec, load_job

DEMO = Path(__file__).resolve().parents[1] / "demo_parts"


def _generator():
    spec = importlib.util.spec_from_file_location("make_demo", DEMO / "make_demo.py")
    mod = importlib.util.module_from_spec(spec)
    sys.modules["make_demo"] = mod  # dataclasses resolve annotations through sys.modules
    spec.loader.exec_module(mod)
    return mod


GEN = _generator()
BUILT = GEN.build_parts()

_TWIST = 600.0 * np.tan(np.radians(15.0))  # half-width times tan(15 deg): the helicoid's rise

# footprint (mm) and height range (mm) as documented in demo_parts/README.md; the heights are
# the extremes of the analytic formulas there (e.g. canopy 250 -/+ (150 + 40)).
DOCUMENTED = {
    "canopy_saddle": ((2400.0, 1600.0), (60.0, 440.0)),
    "bench_shell": ((1800.0, 1200.0), (0.0, 300.0)),
    "wave_wall": ((3000.0, 1400.0), (100.0, 340.0)),
    "stair_stringer": ((1200.0, 2800.0), (250.0 - _TWIST, 250.0 + _TWIST)),
}


@pytest.mark.parametrize("name", sorted(DOCUMENTED))
def test_generator_reproduces_stored_mesh_bytes(name):
    stored = (DEMO / f"{name}.stl").read_bytes()
    assert GEN.stl_bytes(BUILT[name]) == stored


def test_generator_is_deterministic():
    again = GEN.build_parts()
    for name, mesh in BUILT.items():
        assert GEN.stl_bytes(again[name]) == GEN.stl_bytes(mesh)


@pytest.mark.parametrize("name", sorted(DOCUMENTED))
def test_stored_mesh_loads_with_documented_size(name):
    path = DEMO / f"{name}.stl"
    assert path.stat().st_size < 1.5e6  # brief: each mesh under about 1.5 MB
    mesh = trimesh.load(path, force="mesh")
    assert 5_000 <= len(mesh.faces) <= 30_000  # brief: roughly 5k-30k triangles
    # binary STL = 80-byte header + 4-byte count + 50 bytes per triangle (STL format definition)
    assert path.stat().st_size == 84 + 50 * len(mesh.faces)
    (lx, ly), (zmin, zmax) = DOCUMENTED[name]
    lo, hi = mesh.bounds
    np.testing.assert_allclose(lo[:2], [0.0, 0.0], atol=1e-3)
    np.testing.assert_allclose(hi[:2], [lx, ly], atol=1e-3)
    # the grids hit the extremes exactly at their corners or mid-lines; jitter keeps the
    # boundary fixed, but an interior maximum may fall between jittered vertices
    assert zmin - 1e-3 <= lo[2] <= zmin + 1.0
    assert zmax - 1.0 <= hi[2] <= zmax + 1e-3


def test_vertices_lie_on_the_analytic_surfaces():
    for part in GEN.PARTS:
        mesh = trimesh.load(DEMO / f"{part.name}.stl", force="mesh")
        v = mesh.vertices
        top = v[v[:, 2] > 1.0] if part.solid else v
        # STL stores float32: about 7 significant digits, so 1e-3 mm on heights under 500 mm
        np.testing.assert_allclose(top[:, 2], part.height(top[:, 0], top[:, 1]), atol=2e-3)


def test_bench_shell_is_a_closed_solid_of_known_volume():
    mesh = trimesh.load(DEMO / "bench_shell.stl", force="mesh")
    assert mesh.is_watertight and mesh.is_winding_consistent
    # V = L W (300 - 110 <u^2> - 110 <v^2>), <u^2> = 1/3 over [-1, 1] (mean of u^2, calculus)
    exact = 1800.0 * 1200.0 * (300.0 - 220.0 / 3.0)
    # a piecewise-linear surface under a concave top lies below it: the mesh volume is smaller
    assert exact * 0.998 < mesh.volume < exact


def test_open_surfaces_face_up():
    for name in ("canopy_saddle", "wave_wall", "stair_stringer"):
        mesh = trimesh.load(DEMO / f"{name}.stl", force="mesh")
        assert not mesh.is_watertight
        assert (mesh.face_normals[:, 2] > 0).all()  # a height field seen from above: normals up


def test_helicoid_sections_are_straight():
    # right helicoid: each section y = const is a straight line (ruled surface, by construction)
    part = next(p for p in GEN.PARTS if p.name == "stair_stringer")
    x = np.linspace(0.0, 1200.0, 7)
    for y in (0.0, 1400.0, 2800.0):
        z = part.height(x, np.full_like(x, y))
        assert np.ptp(np.diff(z) / np.diff(x)) < 1e-12


def test_demo_job_loads_and_sets_every_key():
    job = load_job(DEMO / "demo_job.toml")
    data = tomllib.loads((DEMO / "demo_job.toml").read_text("utf-8"))
    assert set(data["machine"]) == {f.name for f in fields(MachineSpec)}
    assert set(data["wire"]) == {f.name for f in fields(WireSpec)}
    assert set(data["pieces"]) == {f.name for f in fields(PieceRules)}
    assert set(data["foam"]) == {"density_kg_m3"}
    assert set(data["tolerance"]) == {f.name for f in fields(ToleranceSpec)}
    assert set(data["mold"]) == {"side", "base_mm", "up"}
    assert {s.name for s in job.stock} == {"long", "half"}
    assert job.tolerance.surface_mm == 0.5
    # every part is larger than the machine takes in one setup: several pieces each
    for (lx, ly), _ in DOCUMENTED.values():
        assert max(lx, ly) > job.usable_width_mm or min(lx, ly) > np.ptp(job.machine.travel_x_mm)
