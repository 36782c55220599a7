"""Property tests on random pieces: travel, rapids, heat, feed durations."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from toolpath_shapes import make_piece

from wirecut.config import default_job
from wirecut.toolpath.build import build_program
from wirecut.toolpath.program import Op
from wirecut.toolpath.towers import face_points

JOB = default_job()
M = JOB.machine


@st.composite
def pieces(draw):
    x0 = draw(st.floats(-50.0, 700.0))
    length = draw(st.floats(100.0, 900.0))
    top = draw(st.floats(120.0, 790.0))
    z0 = draw(st.floats(100.0, 800.0))
    width = draw(st.floats(100.0, min(1000.0, M.span_mm - 100.0 - z0)))
    k = draw(st.integers(2, 10))
    xs = np.sort(np.asarray(draw(st.lists(st.floats(0.0, 1.0), min_size=k, max_size=k))))
    xs = x0 + length * (xs - xs.min()) / max(np.ptp(xs), 1e-9) if np.ptp(xs) > 1e-6 else None
    if xs is None:
        xs = np.linspace(x0, x0 + length, k)
    ys_l = np.asarray(draw(st.lists(st.floats(20.0, top - 10.0), min_size=k, max_size=k)))
    dy = np.asarray(draw(st.lists(st.floats(-40.0, 40.0), min_size=k, max_size=k)))
    taper = draw(st.floats(-0.2, 0.2))
    xc = 0.5 * (xs[0] + xs[-1])
    left = np.column_stack([xs, ys_l])
    right = np.column_stack([xc + (xs - xc) * (1 + taper), np.clip(ys_l + dy, 10.0, top - 5)])
    return make_piece(left, right, (x0, x0 + length), (0.0, top), (z0, z0 + width))


def _inside_block(faces: np.ndarray, block) -> np.ndarray:
    return (
        (faces[..., 0] > block.x_mm[0])
        & (faces[..., 0] < block.x_mm[1])
        & (faces[..., 1] < block.y_mm[1])
    )


@settings(max_examples=40, deadline=None)
@given(pieces())
def test_random_pieces_are_safe(piece):
    program, report, findings = build_program(piece, JOB)
    if program is None:  # refused: said so, nothing written
        assert any(f.code == "outside-travel" for f in findings)
        return
    pos = program.positions()
    # no position outside travel (machine limits from the profile)
    assert pos[:, [0, 2]].min() >= M.travel_x_mm[0] - 1e-9
    assert pos[:, [0, 2]].max() <= M.travel_x_mm[1] + 1e-9
    assert pos[:, [1, 3]].min() >= M.travel_y_mm[0] - 1e-9
    assert pos[:, [1, 3]].max() <= M.travel_y_mm[1] + 1e-9
    # the block as the program sees it (shifted when re-placed)
    blk = type(piece.block)(
        (piece.block.x_mm[0] + report.shift_x_mm, piece.block.x_mm[1] + report.shift_x_mm),
        piece.block.y_mm,
        piece.block.z_mm,
    )
    zs = np.linspace(blk.z_mm[0], blk.z_mm[1], 3)
    s = np.linspace(0.0, 1.0, 11)
    for i in np.flatnonzero(program.ops == Op.RAPID):  # no rapid through the block
        path = (1 - s)[:, None] * pos[i] + s[:, None] * pos[i + 1]
        assert not _inside_block(face_points(path, zs, M.span_mm), blk).any()
    # heat off at the end, and no motion after it but the rapid home
    off = np.flatnonzero(program.ops == Op.HEAT_OFF)
    assert len(off) == 1 and np.all(program.ops[off[0] + 1 :] == Op.RAPID)
    assert np.flatnonzero(program.ops == Op.FEED).max() < off[0]
    # every feed takes a positive time, every axis within its speed
    feed = program.ops == Op.FEED
    assert np.all(program.duration_s[feed] > 0)
    v = np.abs(pos[1:] - pos[:-1])[feed] / program.duration_s[feed][:, None]
    assert v.max() <= M.max_axis_speed_mm_s * (1 + 1e-9)
