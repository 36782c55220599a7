"""The bad-input battery: every refusal exits 2 with one line on stderr, no traceback, no files.

Each case runs the real command line (``wirecut.cli.main``) on a hostile input and checks the
contract of shared/interface.md: exit code 2, a single line on stderr naming the problem,
nothing written next to the inputs or at the output path.
"""

from __future__ import annotations

import os
import struct
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import trimesh

from wirecut.cli import main


def _saddle(path: Path, n: int = 12, size: float = 600.0, c: float = 2000.0) -> Path:
    """A small hyperbolic paraboloid z = xy/c as an STL (a valid input)."""
    xs = np.linspace(-size / 2, size / 2, n)
    x, y = np.meshgrid(xs, xs, indexing="ij")
    v = np.column_stack([x.ravel(), y.ravel(), (x * y / c).ravel() + 200.0])
    f = []
    for i in range(n - 1):
        for j in range(n - 1):
            a, b, cc, d = i * n + j, (i + 1) * n + j, (i + 1) * n + j + 1, i * n + j + 1
            f += [[a, b, cc], [a, cc, d]]
    trimesh.Trimesh(v, np.array(f), process=False).export(path)
    return path


@pytest.fixture()
def good_mesh(tmp_path) -> Path:
    return _saddle(tmp_path / "good.stl")


def _ascii_stl(tris: list[list[list[float]]]) -> str:
    out = ["solid t"]
    for t in tris:
        out.append(" facet normal 0 0 1\n  outer loop")
        out += [f"   vertex {p[0]} {p[1]} {p[2]}" for p in t]
        out.append("  endloop\n endfacet")
    out.append("endsolid t")
    return "\n".join(out) + "\n"


def _write(tmp_path: Path, name: str, data: bytes | str) -> Path:
    p = tmp_path / name
    if isinstance(data, str):
        p.write_text(data)
    else:
        p.write_bytes(data)
    return p


def _run(argv: list[str], capsys) -> tuple[int, str]:
    code = main([str(a) for a in argv])
    err = capsys.readouterr().err
    return code, err


def _listing(root: Path) -> set[str]:
    return {str(p.relative_to(root)) for p in root.rglob("*")}


def _assert_refused(code: int, err: str, word: str) -> None:
    assert code == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert word.lower() in lines[0].lower(), lines[0]


# (file name, content, a word the message must contain)
MESH_CASES = [
    ("empty.stl", b"", "empty"),
    ("garbage.stl", bytes(range(256)) * 7, "garbage.stl"),
    ("truncated.stl", b"\0" * 80 + struct.pack("<I", 1000) + b"\0" * 100, "truncated.stl"),
    ("notamesh.obj", "this is a shopping list\nmilk\neggs\n", "notamesh.obj"),
    ("words.stl", "hello world, not a solid at all\n", "words.stl"),
    ("nan.stl", _ascii_stl([[[0, 0, 0], [1, 0, "nan"], [0, 1, 0]]] * 3), "nan"),
    ("inf.stl", _ascii_stl([[[0, 0, 0], [1e3, 0, "inf"], [0, 1e3, 0]]] * 3), "inf"),
    (
        "collinear.stl",
        _ascii_stl([[[0, 0, 0], [100, 0, 0], [200, 0, 0]], [[0, 0, 0], [0, 50, 0], [0, 99, 0]]]),
        "collinear.stl",
    ),
    ("zeroarea.stl", _ascii_stl([[[5, 5, 5], [5, 5, 5], [5, 5, 5]]] * 4), "zeroarea.stl"),
    ("nofaces.obj", "v 0 0 0\nv 1 0 0\nv 0 1 0\n", "nofaces.obj"),
    (
        "points.ply",
        "ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\n"
        "property float y\nproperty float z\nend_header\n0 0 0\n1 0 0\n0 1 0\n",
        "points.ply",
    ),
    (
        "absurd.stl",
        _ascii_stl(
            [[[0, 0, 0], [1e30, 0, 0], [0, 1e30, 0]], [[1e30, 0, 0], [1e30, 1e30, 0], [0, 1e30, 0]]]
        ),
        "absurd.stl",
    ),
    ("unknown.xyz", "0 0 0\n1 1 1\n", "unknown.xyz"),
]


@pytest.mark.parametrize("name, data, word", MESH_CASES, ids=[c[0] for c in MESH_CASES])
@pytest.mark.parametrize("command", ["check", "plan"])
def test_bad_meshes_are_refused(tmp_path, capsys, name, data, word, command):
    mesh = _write(tmp_path, name, data)
    out = tmp_path / "out"
    before = _listing(tmp_path)
    code, err = _run([command, mesh, "--out", out], capsys)
    _assert_refused(code, err, word)
    assert _listing(tmp_path) == before
    assert not out.exists()


@pytest.mark.parametrize("name", ["nan.stl", "inf.stl"])
def test_bad_coordinates_print_one_line_in_a_real_run(tmp_path, name):
    # in a process of its own, so that nothing (numpy's warnings as trimesh computes normals
    # from NaN or infinite coordinates) is caught by pytest instead of reaching stderr
    data = next(c[1] for c in MESH_CASES if c[0] == name)
    mesh = _write(tmp_path, name, data)
    proc = subprocess.run(
        [sys.executable, "-m", "wirecut.cli", "check", str(mesh)],
        capture_output=True, text=True, cwd=tmp_path,
    )  # fmt: skip
    _assert_refused(proc.returncode, proc.stderr, name.split(".")[0])


def test_signalling_nan_in_a_binary_stl_prints_one_line(tmp_path):
    # a binary STL read by numpy: widening a float32 signalling NaN (0x7fa00000, IEEE 754)
    # raises the invalid flag, which numpy would print as a warning beside the refusal
    import struct

    corner = struct.pack("<I", 0x7FA00000) * 3
    record = bytes(12) + corner * 3 + bytes(2)
    mesh = _write(tmp_path, "snan.stl", bytes(80) + struct.pack("<I", 1) + record)
    proc = subprocess.run(
        [sys.executable, "-m", "wirecut.cli", "check", str(mesh)],
        capture_output=True, text=True, cwd=tmp_path,
    )  # fmt: skip
    _assert_refused(proc.returncode, proc.stderr, "NaN")


def test_missing_file_and_folder(tmp_path, capsys):
    code, err = _run(["check", tmp_path / "nope.stl"], capsys)
    _assert_refused(code, err, "nope.stl")
    code, err = _run(["plan", tmp_path, "--out", tmp_path / "o"], capsys)
    _assert_refused(code, err, "folder")
    assert not (tmp_path / "o").exists()


PROFILE_CASES = [
    ("[machine]\nspann_mm = 1600\n", "machine.spann_mm"),
    ("[wire]\ncut_speed_mm_s = 'fast'\n", "wire.cut_speed_mm_s"),
    ("[machine]\ntravel_x_mm = [500.0, 100.0]\n", "machine.travel_x_mm"),
    ("[tolerance]\nsurface_mm = -1\n", "tolerance.surface_mm"),
    ("[tolerance]\npolicy = 'gentle'\n", "tolerance.policy"),
    ("[machine]\ndialect = 'mystery'\n", "machine.dialect"),
    ("[machine\nspan_mm = 1600\n", "TOML"),
    ("[[stock]]\nname = 'bad\\nname'\nsize_mm = [1, 1, 1]\ncount = 1\n", "stock[0].name"),
]


@pytest.mark.parametrize("text, word", PROFILE_CASES, ids=[c[1] for c in PROFILE_CASES])
def test_bad_profiles_are_refused(tmp_path, capsys, good_mesh, text, word):
    job = _write(tmp_path, "job.toml", text)
    out = tmp_path / "out"
    before = _listing(tmp_path)
    code, err = _run(["plan", good_mesh, "--job", job, "--out", out], capsys)
    _assert_refused(code, err, word)
    assert _listing(tmp_path) == before


@pytest.mark.parametrize("value", ["0", "-0.5", "abc", "nan", "inf", ""])
def test_bad_tolerance(tmp_path, capsys, good_mesh, value):
    code, err = _run(["check", good_mesh, "--tolerance", value, "--out", tmp_path / "o"], capsys)
    _assert_refused(code, err, "tolerance")
    assert not (tmp_path / "o").exists()


def test_bad_units(tmp_path, capsys, good_mesh):
    code, err = _run(["check", good_mesh, "--units", "furlong"], capsys)
    _assert_refused(code, err, "units")


def test_output_path_is_a_file(tmp_path, capsys, good_mesh):
    f = _write(tmp_path, "taken", "keep me")
    code, err = _run(["plan", good_mesh, "--out", f], capsys)
    _assert_refused(code, err, "file")
    assert f.read_text() == "keep me"
    code, err = _run(["plan", good_mesh, "--out", f / "sub"], capsys)
    _assert_refused(code, err, "file")


def test_json_path_is_a_folder(tmp_path, capsys, good_mesh):
    code, err = _run(["check", good_mesh, "--json", tmp_path], capsys)
    _assert_refused(code, err, "folder")


@pytest.mark.skipif(
    not Path("/proc/self").is_dir(), reason="needs /proc, a folder nobody can write"
)
def test_output_path_cannot_be_written(capsys, good_mesh):
    code, err = _run(["plan", good_mesh, "--out", "/proc/wirecut-out"], capsys)
    _assert_refused(code, err, "/proc/wirecut-out")


def test_unknown_option_is_one_line(capsys, good_mesh):
    code, err = _run(["check", good_mesh, "--frobnicate"], capsys)
    _assert_refused(code, err, "frobnicate")


def test_console_script_has_no_traceback(tmp_path):
    """The installed entry point behaves the same in a fresh process."""
    bad = _write(tmp_path, "bad.stl", b"")
    env = dict(os.environ)
    proc = subprocess.run(
        [sys.executable, "-m", "wirecut.cli", "check", str(bad)],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1


def test_too_many_triangles_is_refused_with_how_to_decimate(tmp_path, capsys, monkeypatch):
    """Above the size the tool plans within 4 GB, the refusal says how to decimate; the limit
    is lowered here so that the test needs no 5-million-triangle file (bench/run.py measures
    the real one)."""
    import wirecut.geometry.mesh as mesh_module

    monkeypatch.setattr(mesh_module, "MAX_TRIANGLES", 100)
    big = _saddle(tmp_path / "big.stl", n=12)  # 242 triangles
    code, err = _run(["plan", big, "--out", tmp_path / "o"], capsys)
    _assert_refused(code, err, "decimate")
    assert not (tmp_path / "o").exists()


def test_demo_names_the_final_folder_of_each_part(tmp_path) -> None:
    # the demo plans into a temporary folder moved into place at the end: the message of
    # each part must name where its files end up, not the temporary folder
    from wirecut.demo import demo_parts, run_demo

    seen = []

    def fake_plan(mesh, job, out, units, console, json_stdout, shown=None):
        out.mkdir(parents=True)
        seen.append((out, shown))
        return 0

    class Quiet:
        def out(self, line: str) -> None:
            pass

    final = tmp_path / "demo_out"
    assert run_demo(final, Quiet(), fake_plan) == 0
    assert [shown for _, shown in seen] == [final / m.stem for m in demo_parts()]
    assert all(final not in out.parents for out, _ in seen)
    assert sorted(p.name for p in final.iterdir()) == sorted(m.stem for m in demo_parts())
