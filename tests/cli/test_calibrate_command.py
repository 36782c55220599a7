"""``wirecut calibrate`` end to end: synthetic test cuts in, profile lines and a plot out."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest

from wirecut.cli import main
from wirecut.config import parse_job


def test_calibrate_prints_profile_lines_that_load(tmp_path, capsys):
    # test cuts made with the model itself, kerf(v) = 0.7 + 1.5 / v, plus seeded noise
    rng = np.random.default_rng(4)
    rows = ["kind,speed_mm_s,measured_mm,width_mm"]
    for v in np.repeat([1.5, 2.0, 3.0, 4.0, 6.0], 3):
        rows.append(f"kerf,{v},{0.7 + 1.5 / v + rng.normal(0, 0.01):.4f},")
    csv = tmp_path / "cuts.csv"
    csv.write_text("\n".join(rows) + "\n")
    plot = tmp_path / "fit.png"
    code = main(["calibrate", str(csv), "--plot", str(plot), "--quiet"])
    out = capsys.readouterr().out
    assert code in (0, 1)  # 1: no lag cuts in the file, a finding says so
    wire = tomllib.loads(out[out.index("[wire]") :].split("\n\n")[0])["wire"]
    assert wire["kerf_base_mm"] == pytest.approx(0.7, abs=0.05)
    assert wire["kerf_speed_coeff_mm2_s"] == pytest.approx(1.5, abs=0.1)
    parse_job({"wire": wire})  # the printed lines are a valid profile section
    assert plot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature


def test_calibrate_refuses_a_bad_file(tmp_path, capsys):
    csv = tmp_path / "bad.csv"
    csv.write_text("kind,speed_mm_s,measured_mm,width_mm\nkerf,fast,1.2,\n")
    assert main(["calibrate", str(csv)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
