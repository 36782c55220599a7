"""Slivers and fragments of the layout (``wirecut.pieces.layout``): where the cuts along
the sweep go, and what becomes of the teeth of a zigzag outline that a cut line crosses."""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import Polygon, box
from shapes_pieces import quick_job

from wirecut.pieces.layout import (
    FRAGMENT_SHARE,
    fragment_finding,
    fragments,
    placed_sweep_cuts,
    sweep_cuts,
)
from wirecut.pieces.split import sweep_limit

SWEEP = np.array([1.0, 0.0])


def limit(job):
    return lambda width: sweep_limit(job, width)


def test_a_sweep_cut_moves_off_a_gap_edge_instead_of_leaving_a_sliver():
    # two panels 1010 and 970 mm long with a 20 mm gap; a blank may be 1150 mm long with its
    # margins: the equal cut at x = 1000 falls 10 mm before the first panel's end, and the
    # 10 mm x 200 mm rest would be a piece of its own. The room the limit leaves (900 to
    # 1100 mm) holds a cut in the gap: two pieces, one per panel
    job = quick_job()
    band = box(0, 0, 1010, 200).union(box(1030, 0, 2000, 200))
    limit = 1100.0 + 2.0 * job.pieces.sweep_margin_mm
    even = sweep_cuts(0.0, 2000.0, limit, job.pieces.sweep_margin_mm)
    assert np.allclose(even, [0, 1000, 2000])
    xs = placed_sweep_cuts(band, SWEEP, 0.0, 2000.0, job, limit)
    assert 1010.0 <= xs[1] <= 1030.0
    assert xs[0] == 0.0 and xs[-1] == 2000.0
    assert np.all(np.diff(xs) <= limit - 2.0 * job.pieces.sweep_margin_mm + 1e-9)


def test_sweep_cuts_stay_equal_where_they_leave_no_sliver():
    job = quick_job()
    band = box(0, 0, 2000, 200)
    limit = 1100.0 + 2.0 * job.pieces.sweep_margin_mm
    xs = placed_sweep_cuts(band, SWEEP, 0.0, 2000.0, job, limit)
    assert np.array_equal(xs, sweep_cuts(0.0, 2000.0, limit, job.pieces.sweep_margin_mm))


def test_teeth_across_a_strip_line_are_left_out_and_an_island_stays():
    # strip 0 (y 0..100) holds one piece; two teeth of its zigzag edge poke above y = 100
    # into strip 1's band, and strip 1 has its own piece beside them. A tooth cannot join
    # strip 0's piece (its blank ends at y = 100): it is left out. A small island that
    # touches nothing stays a piece
    job = quick_job()
    small = FRAGMENT_SHARE * job.pieces.min_width_mm**2
    main0 = box(0, 0, 1000, 100)
    main1 = box(400, 100, 1000, 200)
    teeth = [Polygon([(100, 100), (120, 100), (110, 115)]),
             Polygon([(200, 100), (230, 100), (215, 120)])]  # fmt: skip
    island = box(3000, 150, 3010, 160)
    assert all(t.area < small for t in teeth) and island.area < small
    items = [(0, main0, 0.0, 100.0), (1, teeth[0], 100.0, 200.0), (1, main1, 100.0, 200.0),
             (1, teeth[1], 100.0, 200.0), (1, island, 100.0, 200.0)]  # fmt: skip
    kept, dropped = fragments(items, SWEEP, job, limit(job))
    assert [p for _, p, _, _ in kept] == [main0, main1, island]
    assert sorted(p.area for p in dropped) == sorted(t.area for t in teeth)
    note = fragment_finding([p.area for p in dropped], job)
    assert note.code == "outline-fragments" and "2 fragments" in note.message
    assert f"{teeth[0].area + teeth[1].area:.0f} mm^2" in note.message


def test_a_fragment_beyond_a_sweep_cut_joins_its_strip_neighbour():
    # a 10 mm x 20 mm corner beyond the sweep cut at x = 1000: it shares that cut line with
    # the piece before it, of the same strip, and the joined blank still fits
    job = quick_job()
    left = box(0, 0, 1000, 100)
    corner = box(1000, 0, 1010, 20)
    items = [(0, left, 0.0, 100.0), (0, corner, 0.0, 100.0)]
    kept, dropped = fragments(items, SWEEP, job, limit(job))
    assert dropped == []
    assert len(kept) == 1
    assert abs(kept[0][1].area - left.area - corner.area) < 1e-6


def test_a_fragment_stays_out_when_joining_would_make_the_blank_too_long():
    job = quick_job()
    long = sweep_limit(job, 100.0) - 2.0 * job.pieces.sweep_margin_mm
    left = box(0, 0, long, 100)
    corner = box(long, 0, long + 10, 20)
    items = [(0, left, 0.0, 100.0), (0, corner, 0.0, 100.0)]
    kept, dropped = fragments(items, SWEEP, job, limit(job))
    assert [p for _, p, _, _ in kept] == [left]
    assert [p.area for p in dropped] == [corner.area]


def test_a_zigzag_notch_edge_across_a_strip_line_leaves_its_teeth_out_of_the_split():
    # a plane 1000 x 2000 mm on a 20 mm grid with a notch x > 500, y > 1410 cut by triangle
    # centroids: its edge zigzags, and the lower triangle of every cell of the row
    # 1400..1420 beyond x = 500 stays, touching its neighbours at corners only. The greedy
    # strips end at y = 1400 (the widest strip, 1400 mm), so those 25 triangles lie in the
    # second strip's band but touch only the first strip's piece. Each is half a cell,
    # 200 mm^2 (under a quarter of the 50 mm minimum width squared): left out, not 25 pieces
    import math

    import shapely
    from shapes_pieces import grid_mesh

    from wirecut.geometry.frames import DirectionFrame
    from wirecut.geometry.mesh import target_from_arrays
    from wirecut.pieces.region import footprint
    from wirecut.pieces.split import split_pieces

    job = quick_job()
    v, f = grid_mesh(np.linspace(0, 1000, 51), np.linspace(0, 2000, 101),
                     lambda x, y: 300 + 0.02 * x + 0.01 * y)  # fmt: skip
    c = v[f].mean(axis=1)
    target, _ = target_from_arrays(v, f[~((c[:, 0] > 500) & (c[:, 1] > 1410))], job)
    frame = DirectionFrame.from_angle(math.radians(90.0), np.array([0.0, 0.0, 1.0]), "below")
    result = split_pieces(target, None, frame, job)
    assert np.allclose(result.cuts_mm, [0.0, 1400.0, 2000.0])
    assert len(result.pieces) == 2
    assert len(result.fragment_areas_mm2) == 25
    assert np.allclose(result.fragment_areas_mm2, 200.0)
    fp = footprint(target.vertices, target.faces, target.up)
    covered = sum(Polygon(p.region_plan).area for p in result.pieces)
    assert covered + sum(result.fragment_areas_mm2) == pytest.approx(fp.area, rel=1e-9)
    assert shapely.union_all([Polygon(p.region_plan) for p in result.pieces]).area == (
        pytest.approx(covered, rel=1e-9)
    )
    assert [f.code for f in result.findings] == ["outline-fragments"]
