"""The planner's refit of a piece with parallel rulings (``plan._refit_parallel``)."""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
from shapely.geometry import Point, Polygon

sys.path.insert(0, str(Path(__file__).parent / "pieces"))
from shapes_pieces import height_target, quick_job  # noqa: E402

from wirecut.geometry.frames import DirectionFrame  # noqa: E402
from wirecut.pieces.split import split_pieces  # noqa: E402
from wirecut.plan import _refit_parallel  # noqa: E402
from wirecut.ruled.fit import fit_cut  # noqa: E402
from wirecut.ruled.sampling import judging_samples  # noqa: E402

UP = np.array([0.0, 0.0, 1.0])


def test_a_refit_has_parallel_rulings_and_keeps_a_knot_on_the_ridge() -> None:
    # a gable whose ridge runs along the wire (y), slightly twisted so that the best fit may
    # skew its rulings: the refit's rulings are parallel, and with a knot on the ridge the
    # parallel cut follows the gable within the twist's own bending
    job = quick_job()
    xs = np.linspace(0.0, 600.0, 61)
    ys = np.linspace(0.0, 400.0, 21)
    target = height_target(
        xs,
        ys,
        lambda x, y: 300.0 - 0.5 * np.abs(x - 300.0) + 1e-4 * (x - 300.0) * (y - 200.0),
        job,
    )
    along = DirectionFrame.from_angle(math.radians(90.0), UP, "below")
    pieces = split_pieces(target, None, [along], job).pieces
    # the piece under the ridge's middle
    piece = next(p for p in pieces if Polygon(p.region_plan).contains(Point(300.0, 200.0)))
    out = _refit_parallel(target, piece, job, "made a face crawl")
    assert out is not None
    flat, note = out
    cut = flat.fit.cut
    assert np.array_equal(cut.left[:, 0], cut.right[:, 0])  # parallel rulings
    assert not flat.fit.skewed
    # a knot on the ridge (machine x of the part's x = 300)
    ridge = piece.part_to_machine @ np.array([300.0, 200.0, 150.0, 1.0])
    assert np.min(np.abs(cut.left[:, 0] - ridge[0])) < 1e-9
    # the same fit as a direct parallel fit of the piece's judging samples with that knot
    b = piece.block
    samples = judging_samples(target, piece.part_to_machine, piece.region_plan)
    direct = fit_cut(samples, b.z_mm[0], b.z_mm[1], piece.part_to_machine, job.tolerance,
                     x_range=b.x_mm, correspondence=False,
                     knots_at=np.array([ridge[0]]))  # fmt: skip
    assert flat.fit.report.max_abs_mm == direct.report.max_abs_mm
    assert flat.fit.report.max_abs_mm < job.tolerance.surface_mm
    # the piece is the same otherwise, and the note says what was done and why
    assert flat.id == piece.id and flat.block == piece.block
    assert note.code == "refit-parallel" and note.piece == piece.id
    assert "made a face crawl" in note.message and "parallel rulings" in note.message
