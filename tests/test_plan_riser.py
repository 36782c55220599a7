"""A hyperbolic paraboloid planned whole: pieces whose wire dives below the blank get a riser."""

from __future__ import annotations

import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).parent / "pieces"))
from shapes_pieces import grid_mesh  # noqa: E402

from wirecut.config import default_job  # noqa: E402
from wirecut.gcode.reader import read_gcode  # noqa: E402
from wirecut.geometry.mesh import target_from_arrays  # noqa: E402
from wirecut.plan import _piece_plan, _shifted, make_plan, plan_json  # noqa: E402
from wirecut.toolpath.towers import RISER_GAP_MM, RISER_STEP_MM, face_points  # noqa: E402


@pytest.fixture(scope="module")
def saddle_plan():
    # z = (x^2 - y^2) / 8000 about the centre: a hyperbolic paraboloid, doubly ruled along the
    # diagonals (x = +-y + c are straight lines on it; do Carmo, Differential Geometry of
    # Curves and Surfaces, 3-5). Cut along a ruling family, the wire tilts across the part; the
    # rotated footprint leaves most blanks longer along the wire than the piece beside their
    # corners, where the extended rulings dive below the blank's bottom and the towers' travel.
    job = default_job()
    xs, ys = np.arange(0.0, 2000.1, 40.0), np.arange(0.0, 1600.1, 40.0)
    v, f = grid_mesh(xs, ys, lambda x, y: ((x - 1000.0) ** 2 - (y - 800.0) ** 2) / 8000.0)
    target, intake = target_from_arrays(v, f, job)
    return job, make_plan(target, job, intake)


def test_every_piece_of_a_saddle_gets_a_program(saddle_plan):
    job, plan = saddle_plan
    assert plan.pieces and all(pp.program is not None for pp in plan.pieces)
    codes = {f.code for f in plan.findings}
    assert "outside-travel" not in codes and "below-bed" not in codes
    assert "on-riser" in codes


def test_risers_are_whole_steps_and_keep_the_wire_above_the_bed(saddle_plan):
    job, plan = saddle_plan
    m = job.machine
    pieces = {p["id"]: p for p in plan_json(plan)["pieces"]}
    lifted = [pp for pp in plan.pieces if pieces[pp.piece.id]["riser_mm"] > 0]
    assert lifted
    for pp in lifted:
        riser = pieces[pp.piece.id]["riser_mm"]
        assert riser % RISER_STEP_MM == 0
        assert pp.piece.block.y_mm[0] == pytest.approx(m.bed_y_mm + riser)
        # the program as the file says it, read back: the wire stays above the bed by the
        # gap at both faces and every tower inside the travel
        back = read_gcode(pp.gcode, job)
        t = back.positions()
        low = min(face_points(t, z, m.span_mm)[:, 1].min() for z in pp.piece.block.z_mm)
        assert low >= m.bed_y_mm + RISER_GAP_MM - 1e-3
        assert t[:, [1, 3]].min() >= m.travel_y_mm[0] - 1e-9
        assert t[:, [1, 3]].max() <= m.travel_y_mm[1] + 1e-9
        assert f"riser under the blank mm: {riser:.0f}" in pp.gcode
        # lifting moves program and piece together: on a machine whose travel and bed reach
        # low enough, the same piece standing on the bed is cut exactly as well
        down = _shifted(pp.piece, np.array([0.0, -riser, 0.0]))
        deep = replace(job, machine=replace(m, travel_y_mm=(-500.0, 800.0), bed_y_mm=-500.0))
        flat, findings = _piece_plan(plan.target, down, deep)
        assert flat.program is not None and "on-riser" not in {f.code for f in findings}
        assert flat.deviation.max_abs_mm == pytest.approx(pp.deviation.max_abs_mm, abs=1e-6)
        np.testing.assert_allclose(flat.program.towers + [0, riser, 0, riser],
                                   pp.program.towers, atol=1e-6)  # fmt: skip
    # pieces that stand on the bed keep their blank's bottom there
    for pp in plan.pieces:
        if pp not in lifted:
            assert pp.piece.block.y_mm[0] == m.bed_y_mm
