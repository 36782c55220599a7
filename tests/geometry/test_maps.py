"""The check pictures: written, valid PNG, deterministic; scale-bar and label helpers."""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.image import imread
from shapes import grid_faces, saddle

from wirecut.config import default_job
from wirecut.export.maps import (
    axis_label,
    scale_bar_length,
    write_curvature_histogram,
    write_cuttability_map,
)
from wirecut.geometry.cuttability import analyse_surface
from wirecut.geometry.mesh import target_from_arrays

JOB = default_job()


def _pipe():
    t = np.linspace(-np.pi / 2 - 0.75 * np.pi, -np.pi / 2 + 0.75 * np.pi, 61)
    x = np.linspace(-400.0, 400.0, 11)
    tt, xx = np.meshgrid(t, x, indexing="ij")
    v = np.column_stack([xx.ravel(), 300 * np.cos(tt).ravel(), 300 * np.sin(tt).ravel()])
    return v, grid_faces(61, 11)


@pytest.mark.parametrize("build", [lambda: saddle(n=41), _pipe])
def test_pictures_written_and_deterministic(tmp_path, build):
    target, _ = target_from_arrays(*build(), JOB)
    an = analyse_surface(target, JOB)
    a, b = tmp_path / "a.png", tmp_path / "b.png"
    write_cuttability_map(target, an, a, JOB.tolerance)
    img = imread(str(a))
    assert img.ndim == 3 and img.shape[0] > 300 and img.shape[1] > 600
    # PNG signature (ISO/IEC 15948, sec. 5.2)
    assert a.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    write_cuttability_map(target, an, b, JOB.tolerance)
    assert a.read_bytes() == b.read_bytes()
    assert b"Software" not in a.read_bytes()
    h1, h2 = tmp_path / "h1.png", tmp_path / "h2.png"
    write_curvature_histogram(an, h1)
    write_curvature_histogram(an, h2)
    assert h1.read_bytes() == h2.read_bytes()
    assert imread(str(h1)).shape[1] > 600


@pytest.mark.parametrize(
    "width, bar",
    # 1-2-5 series of round lengths (common practice for map scale bars)
    [(1000.0, 200.0), (1414.0, 200.0), (3000.0, 500.0), (90.0, 10.0), (12000.0, 2000.0)],
)
def test_scale_bar_length(width, bar):
    assert scale_bar_length(width) == bar


def test_axis_label():
    # plan basis for up = +z: e2 = up x e1 = z x x = +y (right-handed frame)
    assert axis_label(np.array([0.0, 1.0, 0.0])) == "part +y"
    assert axis_label(np.array([0.0, 0.0, -1.0])) == "part -z"
    assert axis_label(np.array([0.6, 0.8, 0.0])) == "part (0.60, 0.80, 0.00)"


def test_map_rays_in_a_worker_give_the_same_picture(tmp_path, monkeypatch):
    import wirecut.export.maps as maps

    target, _ = target_from_arrays(*saddle(n=41), JOB)
    an = analyse_surface(target, JOB)
    here, there = tmp_path / "here.png", tmp_path / "there.png"
    write_cuttability_map(target, an, here, JOB.tolerance)
    monkeypatch.setattr(maps, "FORK_FACES", 0)  # fork even for this small mesh
    calls = []
    write_cuttability_map(target, an, there, JOB.tolerance, meanwhile=lambda: calls.append(1))
    assert calls == [1] and here.read_bytes() == there.read_bytes()


def test_an_error_meanwhile_reaches_the_caller(tmp_path, monkeypatch):
    import wirecut.export.maps as maps

    target, _ = target_from_arrays(*saddle(n=21), JOB)
    an = analyse_surface(target, JOB)
    monkeypatch.setattr(maps, "FORK_FACES", 0)

    def fail():
        raise OSError("disk full")

    with pytest.raises(OSError, match="disk full"):
        write_cuttability_map(target, an, tmp_path / "m.png", JOB.tolerance, meanwhile=fail)
    assert not (tmp_path / "m.png").exists()


@pytest.mark.parametrize(
    "span, narrow, low",
    [((400.0, 2800.0), True, False), ((3500.0, 3000.0), False, False),
     ((6000.0, 3000.0), False, True), ((20000.0, 1000.0), False, True)],
)  # fmt: skip
def test_the_map_is_sized_to_the_part(span, narrow, low):
    from wirecut.export.maps import _MAP_HEIGHT_IN, _MAP_WIDE_IN, _map_size

    width, height = _map_size(np.array(span))
    assert 7.0 <= width <= 13.0 and 4.0 <= height <= _MAP_HEIGHT_IN
    assert (width < _MAP_WIDE_IN) is narrow
    assert (height < _MAP_HEIGHT_IN) is low
    # the two panels at the data's aspect fill the room between the margins, or the size is
    # held at its bounds
    aspect = 1.1 * span[0] / (1.23 * span[1])
    used = 2.0 * (height - 1.5) * aspect + 2.0
    assert used == pytest.approx(width, rel=1e-9) or width in (7.0, 13.0)


def test_undercut_hidden_under_another_sheet_is_marked_in_plan():
    from wirecut.geometry.occlusion import first_hit_faces

    def disk(z, half, n):
        x, y = np.meshgrid(np.linspace(-half, half, n), np.linspace(-half, half, n), indexing="ij")
        return np.column_stack([x.ravel(), y.ravel(), np.full(n * n, z)]), grid_faces(n, n)

    (v1, f1), (v2, f2) = disk(100.0, 300.0, 13), disk(300.0, 100.0, 5)
    target, _ = target_from_arrays(
        np.vstack([v1, v2]), np.vstack([f1, f2 + len(v1)]), default_job()
    )
    lower = target.vertices[target.faces].mean(axis=1)[:, 2] < 200.0
    pts = np.array([[0.0, 0.0], [50.0, -60.0], [250.0, 0.0], [0.0, 280.0], [500.0, 0.0]])
    first, marked = first_hit_faces(target, pts, lower)
    # the first two lie under the upper sheet: it is met first, the lower one is there too
    assert not lower[first[:2]].any() and marked[:2].all()
    # beside it the lower sheet is met first; beyond both, nothing
    assert lower[first[2:4]].all() and marked[2:4].all()
    assert first[4] == -1 and not marked[4]
    # without marked faces the call gives the first faces alone, as before
    assert np.array_equal(first_hit_faces(target, pts), first)
