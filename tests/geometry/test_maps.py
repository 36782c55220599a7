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
