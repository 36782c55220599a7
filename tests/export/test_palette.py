"""The one deviation colour scale and the worst-per-cell raster of the pictures."""

from __future__ import annotations

import numpy as np
import pytest

from wirecut.export.palette import deviation_cmap, deviation_colors, deviation_norm, worst_raster


def test_raster_keeps_the_worst_sample_of_each_cell() -> None:
    # four samples in one cell and one alone: the cell shows the largest magnitude, sign kept
    xy = np.array([[1.0, 1.0], [1.2, 1.1], [1.1, 1.3], [1.3, 1.2], [9.0, 9.0], [9.0, 1.0]])
    d = np.array([0.1, -0.3, 0.25, np.nan, 0.05, np.nan])
    value, unknown, extent = worst_raster(xy, d, cells=4)
    x0, x1, y0, y1 = extent
    assert x0 <= 1.0 and x1 >= 9.0 and y0 <= 1.0 and y1 >= 9.0
    cell = (x1 - x0) / value.shape[1]

    def at(p):
        return int((p[1] - y0) / cell), int((p[0] - x0) / cell)

    assert value[at(xy[0])] == -0.3
    assert value[at(xy[4])] == 0.05
    assert unknown[at(xy[5])] and not np.isfinite(value[at(xy[5])])
    assert not unknown[at(xy[0])]  # a cell with known samples is not marked unknown
    finite = value[np.isfinite(value)]
    assert set(np.round(finite, 6)) == {-0.3, 0.05}


def test_raster_cells_are_not_finer_than_the_samples() -> None:
    # a regular 50 x 50 lattice at 2 mm: no empty cell inside (cells >= 1.5 spacings)
    g = np.arange(50) * 2.0
    xy = np.column_stack([a.ravel() for a in np.meshgrid(g, g)])
    value, _, _ = worst_raster(xy, np.zeros(len(xy)), cells=400)
    assert np.isfinite(value).all()


def test_pictures_and_mesh_colours_agree() -> None:
    # the report's colour map and the PLY vertex colours are the same scale: -tol blue,
    # 0 white, +tol red, clipped beyond
    tol = 0.5
    d = np.linspace(-0.7, 0.7, 29)
    mesh = deviation_colors(d, tol)[:, :3].astype(float)
    pic = deviation_cmap()(deviation_norm(tol)(d))[:, :3] * 255.0
    assert np.abs(mesh - pic).max() <= 3.0  # 256-entry lookup table vs exact interpolation
    assert mesh[0, 2] > mesh[0, 0] and mesh[-1, 0] > mesh[-1, 2]
    assert np.array_equal(mesh[0], mesh[2])  # beyond -tol held at the end colour


def test_isolated_holes_are_filled_but_the_outside_is_not() -> None:
    # a lattice with every 7th sample missing: no interior cell stays empty, and the raster
    # does not grow past the samples (construction)
    g = np.arange(60) * 2.0
    xy = np.column_stack([a.ravel() for a in np.meshgrid(g, g)])
    xy = xy[np.arange(len(xy)) % 7 != 3]
    value, _, extent = worst_raster(xy, np.ones(len(xy)), cells=400)
    assert np.isfinite(value).all()
    assert extent[0] == 0.0 and extent[2] == 0.0 and extent[1] <= 118.0 + 4.0


def _drawn_twice(size, n, title, seed):
    """A report-sized picture of n random samples over a w x h mm piece at (850, 600), drawn
    twice: the second drawing starts from the first one's layout."""
    from wirecut.export.palette import DeviationPicture

    w, h = size
    rng = np.random.default_rng(seed)
    xy = rng.random((n, 2)) * [w, h] + [850.0, 600.0]
    picture = DeviationPicture(0.5, (5.0, 3.6), (0.16, 0.9, 0.15, 0.9), "mm", cells=100)
    for _ in range(2):
        picture.show(xy, rng.normal(0, 0.2, len(xy)), title=title)
        picture.fig.canvas.draw()
    return picture


@pytest.mark.parametrize("size", [(70.0, 600.0), (130.0, 600.0), (1000.0, 300.0), (3000.0, 150.0)])
def test_the_scale_bar_hides_no_sample_and_the_x_axis_has_a_label(size):
    picture = _drawn_twice(size, 4000, "piece", seed=4)
    renderer = picture.fig.canvas.get_renderer()
    bar = next(a for a in picture.ax.artists if a.__class__.__name__ == "AnchoredSizeBar")
    box = bar.get_window_extent(renderer)
    # the data's lowest row in pixels: the bar box stays below it
    _, lowest = picture.ax.transData.transform((850.0, 600.0))
    assert box.y1 <= lowest + 0.5
    assert len(picture.ax.get_xticks()) >= 1


@pytest.mark.parametrize("size", [(70.0, 600.0), (400.0, 600.0), (1000.0, 300.0)])
def test_a_narrow_piece_gets_a_narrow_picture_with_nothing_cut_off(size):
    w, h = size
    picture = _drawn_twice(size, 3000, "P01: deviation", seed=5)
    renderer = picture.fig.canvas.get_renderer()
    fig_w = picture.fig.bbox.width
    drawn = picture.ax.get_window_extent(renderer)  # the axes after the equal aspect
    bar = picture._bar_ax.get_window_extent(renderer)
    title = picture.ax.title.get_window_extent(renderer)
    assert picture.fig.get_size_inches()[0] <= 5.0 + 1e-9
    # the data fill the width the layout gave the axes, unless that is the narrowest width
    # (0.9 in) or the title's
    box = picture.ax.get_position(original=True).width * fig_w
    assert drawn.width >= box - 1.0 or box <= max(0.9 * picture.fig.dpi, title.width) + 1.0
    # the colour bar lies right of the data, close to them, and inside the figure
    assert drawn.x1 <= bar.x0 <= drawn.x1 + 0.6 * picture.fig.dpi
    assert bar.x1 <= fig_w
    assert 0.0 <= title.x0 and title.x1 <= fig_w
    if w < h / 2:  # a narrow piece: a picture well under the widest
        assert picture.fig.get_size_inches()[0] < 4.0
