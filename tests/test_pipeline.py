"""The whole job end to end, through the command line, checked from outside.

A small saddle z = 250 + x y / c (a hyperbolic paraboloid, doubly ruled) is planned with the
default machine; then every written program is read by Debian's linuxcnc RS274/NGC
interpreter, replayed by ``wirecut simulate``, and the plan's files are compared with what
independent readers and hand integrals say.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import trimesh

from wirecut.cli import main
from wirecut.config import default_job
from wirecut.gcode.reader import read_gcode
from wirecut.toolpath.program import Op

C_MM = 3000.0  # saddle constant
SIZE = (1300.0, 900.0)  # footprint, mm
BASE_Z = 250.0

INTERFACE_SUMMARY = {
    "feasible_area_fraction", "max_deviation_mm", "pieces", "blocks_used", "foam_volume_m3",
    "kept_volume_m3", "waste_fraction", "machine_time_s",
}  # fmt: skip
INTERFACE_PIECE = {
    "id", "gcode", "region_part_xy_mm", "wire_direction_part", "part_to_machine", "faces_z_mm",
    "stock", "max_deviation_mm", "rms_deviation_mm", "gouge_area_fraction",
    "undercut_area_fraction", "feasible_area_fraction", "machine_time_s",
}  # fmt: skip
INTERFACE_ANALYSIS = {
    "target_area_mm2", "gaussian_curvature_per_mm2", "developable_area_fraction",
    "ruled_area_fraction", "synclastic_area_fraction", "wire_reach_mm", "undercut_area_fraction",
}  # fmt: skip


def saddle_mesh(path: Path, n: tuple[int, int] = (40, 28)) -> Path:
    lx, ly = SIZE
    x = np.linspace(0.0, lx, n[0] + 1)
    y = np.linspace(0.0, ly, n[1] + 1)
    gx, gy = np.meshgrid(x, y, indexing="ij")
    gz = BASE_Z + (gx - lx / 2) * (gy - ly / 2) / C_MM
    v = np.column_stack([gx.ravel(), gy.ravel(), gz.ravel()])
    i, j = np.meshgrid(np.arange(n[0]), np.arange(n[1]), indexing="ij")
    a = (i * (n[1] + 1) + j).ravel()
    b, c, d = a + (n[1] + 1), a + (n[1] + 2), a + 1
    f = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    trimesh.Trimesh(v, f, process=False).export(path)
    return path


@pytest.fixture(scope="module")
def planned(tmp_path_factory):
    root = tmp_path_factory.mktemp("pipeline")
    mesh = saddle_mesh(root / "saddle.stl")
    out = root / "plan"
    code = main(["plan", str(mesh), "--out", str(out), "--quiet"])
    data = json.loads((out / "plan.json").read_text())
    return mesh, out, code, data


def test_plan_writes_every_interface_key(planned):
    _, out, code, data = planned
    assert code == 0, data["findings"]  # a doubly ruled saddle: every piece within tolerance
    assert data["units"] == "mm"
    assert INTERFACE_SUMMARY <= set(data["summary"])
    assert INTERFACE_ANALYSIS <= set(data["analysis"])
    assert data["pieces"], "no pieces"
    for p in data["pieces"]:
        assert INTERFACE_PIECE <= set(p)
        assert (out / p["gcode"]).is_file()
        assert np.asarray(p["part_to_machine"]).shape == (4, 4)
    for name in ("report.html", "pieces.dxf", "rationalized.ply", "deviation.png"):
        assert (out / name).is_file(), name
    # the report names the part it plans
    assert "<title>wirecut plan: saddle.stl</title>" in (out / "report.html").read_text("utf-8")
    # no half-written leftovers beside the output
    assert not [p for p in out.parent.iterdir() if ".partial-" in p.name]


def test_findings_carry_their_severity_and_the_exit_code_follows_it(planned):
    # the contract's code, piece and message, and the severity (an extension): the exit code
    # is 1 exactly when some finding needs attention, and the report's table says which
    _, out, code, data = planned
    for f in data["findings"]:
        assert {"code", "piece", "message"} <= set(f)
        assert f["severity"] in ("info", "attention")
    assert code == (1 if any(f["severity"] == "attention" for f in data["findings"]) else 0)
    html = (out / "report.html").read_text("utf-8")
    assert "<th>severity</th>" in html
    for f in data["findings"]:
        assert f"<tr class='{f['severity']}'><td class='code'>{f['code']}</td>" in html


def test_saddle_is_cut_within_tolerance_and_volume_matches(planned):
    _, _, _, data = planned
    s = data["summary"]
    assert s["feasible_area_fraction"] == pytest.approx(1.0, abs=1e-3)
    assert s["max_deviation_mm"] <= data["tolerance_mm"]
    # kept foam = integral of (z - base plane) over the footprint; the base plane lies
    # mold.base_mm under the lowest point. The mean of (x - a)(y - b) over the rectangle is 0,
    # so the integral is area * (BASE_Z - z_min + base_mm) (hand integral of a bilinear form)
    job = default_job()
    lx, ly = SIZE
    z_min = BASE_Z - (lx / 2) * (ly / 2) / C_MM
    kept = lx * ly * (BASE_Z - z_min + job.mold.base_mm) * 1e-9
    assert s["kept_volume_m3"] == pytest.approx(kept, rel=0.005)
    assert s["foam_volume_m3"] >= s["kept_volume_m3"]
    assert s["waste_fraction"] == pytest.approx(1 - s["kept_volume_m3"] / s["foam_volume_m3"])


def test_machine_time_is_the_programs_own(planned):
    _, out, _, data = planned
    job = default_job()
    total = 0.0
    for p in data["pieces"]:
        prog = read_gcode((out / p["gcode"]).read_text(), job)
        assert prog.machine_time_s == pytest.approx(p["machine_time_s"], rel=1e-3)
        total += prog.machine_time_s
        assert prog.ops[-1] != Op.HEAT_ON
    assert data["summary"]["machine_time_s"] == pytest.approx(total, rel=1e-3)


def test_every_program_parses_in_linuxcnc(planned, interpreter, tmp_path):
    _, out, _, data = planned
    job = default_job()
    for p in data["pieces"]:
        text = (out / p["gcode"]).read_text()
        result = interpreter(text, tmp_path)
        # result 1 = INTERP_EXIT, the program ended by M2 (linuxcnc interp_return.hh)
        assert result["result"] == 1, (result["error"], result["error_line"])
        got = np.array([m["xyzabcuvw_mm"] for m in result["moves"]])[:, [0, 1, 6, 7]]
        prog = read_gcode(text, job)
        motion = (prog.ops == Op.RAPID) | (prog.ops == Op.FEED)
        want = np.vstack([prog.start[None, :], prog.towers[motion]])
        np.testing.assert_allclose(got, want, atol=0.001)  # within 0.001 mm (the brief)
        lo_x, hi_x = job.machine.travel_x_mm
        lo_y, hi_y = job.machine.travel_y_mm
        assert got[:, [0, 2]].min() >= lo_x and got[:, [0, 2]].max() <= hi_x
        assert got[:, [1, 3]].min() >= lo_y and got[:, [1, 3]].max() <= hi_y


def test_simulate_agrees_with_the_plan(planned, tmp_path, capsys):
    mesh, out, _, data = planned
    for p in data["pieces"]:
        report = tmp_path / f"{p['id']}.json"
        code = main(
            ["simulate", str(out / p["gcode"]), "--against", str(mesh), "--piece", p["id"],
             "--plan", str(out / "plan.json"), "--json", str(report), "--quiet"]
        )  # fmt: skip
        assert code == 0, capsys.readouterr().err
        got = json.loads(report.read_text())["deviation"]["max_deviation_mm"]
        want = p["max_deviation_mm"]
        # the brief: what simulate measures on the written program agrees with the prediction
        # within 1 % or 0.01 mm
        assert abs(got - want) <= max(0.01 * want, 0.01), (p["id"], got, want)


def test_dxf_read_by_an_independent_parser(planned):
    _, out, _, data = planned
    import ezdxf

    doc = ezdxf.readfile(out / "pieces.dxf")
    assert doc.header["$INSUNITS"] == 4  # millimetres (DXF reference, $INSUNITS)
    path = trimesh.load(out / "pieces.dxf", force="path")  # trimesh's own DXF reader
    assert len(path.entities) > 0


def test_same_input_gives_identical_files(planned, tmp_path):
    mesh, out, _, _ = planned
    again = tmp_path / "again"
    main(["plan", str(mesh), "--out", str(again), "--quiet"])
    for rel in ["plan.json", "pieces.dxf", "rationalized.ply", "report.html"] + sorted(
        str(p.relative_to(out)) for p in (out / "gcode").iterdir()
    ):
        assert (out / rel).read_bytes() == (again / rel).read_bytes(), rel


def test_rerun_replaces_and_a_refused_run_keeps_the_old(planned, tmp_path):
    mesh, out, _, _ = planned
    target = tmp_path / "o"
    assert main(["plan", str(mesh), "--out", str(target), "--quiet"]) in (0, 1)
    before = sorted(p.name for p in target.rglob("*"))
    bad = tmp_path / "bad.stl"
    bad.write_bytes(b"")
    assert main(["plan", str(bad), "--out", str(target), "--quiet"]) == 2
    assert sorted(p.name for p in target.rglob("*")) == before
