"""One colour scale for signed deviation, and the plan raster every deviation picture uses.

Every output that colours deviation (the report's plan view and piece pictures, its 3D view,
``deviation.png`` and the vertex colours of ``rationalized.ply``) uses this ramp, so a colour
means the same thing everywhere: deep red for foam left on the part at +tol (material above
the surface, the colour inspection maps give material above nominal, # common practice),
white at 0, deep blue for a gouge at -tol, the ends held beyond the tolerance; mid grey where
no deviation is known. The ramp itself is our own.

The pictures draw the samples as a plan raster, not as dots: each cell shows the sample of
largest absolute deviation that falls in it (the worst, so a raster never hides an
out-of-tolerance spot behind a better neighbour; an empty cell among filled ones takes the
worst of its neighbours), and the cost is one pass over the samples whatever their number.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "RAMP",
    "deviation_colors",
    "deviation_cmap",
    "deviation_norm",
    "worst_raster",
    "DeviationPicture",
]

#: The diverging ramp: (position in -1..1 of the tolerance, R, G, B in 0..1).
RAMP = np.array(
    [
        [-1.0, 0.09, 0.20, 0.55],
        [-0.5, 0.38, 0.60, 0.86],
        [0.0, 0.97, 0.97, 0.95],
        [0.5, 0.93, 0.55, 0.38],
        [1.0, 0.62, 0.08, 0.10],
    ]
)

#: Colour of samples with no known deviation (not covered by any cut).
UNKNOWN = 0.5


def deviation_colors(signed: np.ndarray, tolerance_mm: float) -> np.ndarray:
    """RGBA colours (n, 4) uint8 of signed deviations (n,) mm on the ramp, +-tol at the ends.

    NaN (no deviation known) is drawn mid grey."""
    d = np.asarray(signed, float).reshape(-1)
    u = np.clip(d / max(float(tolerance_mm), 1e-12), -1.0, 1.0)
    rgb = np.column_stack([np.interp(u, RAMP[:, 0], RAMP[:, i]) for i in (1, 2, 3)])
    rgb[~np.isfinite(d)] = UNKNOWN
    rgba = np.column_stack([rgb, np.ones(len(d))])
    return np.round(rgba * 255).astype(np.uint8)


def deviation_cmap():
    """The ramp as a matplotlib colormap over 0..1 (NaN transparent)."""
    from matplotlib.colors import LinearSegmentedColormap

    cmap = LinearSegmentedColormap.from_list(
        "wirecut-deviation", [((p + 1.0) / 2.0, tuple(c)) for p, *c in RAMP]
    )
    return cmap.with_extremes(bad=(0.0, 0.0, 0.0, 0.0))


def deviation_norm(tolerance_mm: float):
    """matplotlib normalization putting -tol and +tol at the ramp's ends."""
    from matplotlib.colors import Normalize

    tol = max(float(tolerance_mm), 1e-12)
    return Normalize(vmin=-tol, vmax=tol)


def worst_raster(
    xy: np.ndarray, signed: np.ndarray, cells: int = 400
) -> tuple[np.ndarray, np.ndarray, tuple[float, float, float, float]]:
    """Plan raster of samples: per cell, the deviation of largest magnitude.

    Parameters
    ----------
    xy : (n, 2) float, mm
        Sample positions in plan view.
    signed : (n,) float, mm
        Signed deviation; NaN where unknown.
    cells : int
        Cells along the longer side at most; cells are never smaller than the samples'
        mean spacing (so the raster has no holes between samples).

    Returns
    -------
    value : (rows, cols) float
        Worst deviation per cell, NaN where no sample with a known deviation falls.
    unknown : (rows, cols) bool
        Cells holding only samples of unknown deviation.
    extent : (x0, x1, y0, y1) mm
        For ``imshow(..., origin="lower", extent=extent)``.
    """
    p = np.asarray(xy, float).reshape(-1, 2)
    d = np.asarray(signed, float).reshape(-1)
    if len(p) == 0:
        return np.full((1, 1), np.nan), np.zeros((1, 1), bool), (0.0, 1.0, 0.0, 1.0)
    lo, hi = p.min(axis=0), p.max(axis=0)
    span = np.maximum(hi - lo, 1e-6)
    spacing = math.sqrt(float(span[0] * span[1]) / len(p))
    cell = max(float(span.max()) / max(int(cells), 1), 1.5 * spacing, 1e-6)
    shape = np.maximum(np.ceil(span / cell).astype(int), 1)
    ij = np.minimum(((p - lo) / cell).astype(int), shape - 1)
    flat = ij[:, 1] * shape[0] + ij[:, 0]
    value = np.full(shape[0] * shape[1], np.nan)
    finite = np.isfinite(d)
    known = np.flatnonzero(finite)
    if len(known):
        # by cell, then by magnitude: the last of each cell's run is its worst sample
        order = known[np.lexsort((np.abs(d[known]), flat[known]))]
        fc = flat[order]
        last = np.flatnonzero(np.r_[fc[1:] != fc[:-1], True])
        value[fc[last]] = d[order[last]]
    unknown = np.zeros(shape[0] * shape[1], bool)
    unknown[flat[~finite]] = True
    unknown &= ~np.isfinite(value)
    rows, cols = int(shape[1]), int(shape[0])
    extent = (float(lo[0]), float(lo[0] + cols * cell), float(lo[1]), float(lo[1] + rows * cell))
    return _fill_holes(value.reshape(rows, cols)), unknown.reshape(rows, cols), extent


def _fill_holes(value: np.ndarray) -> np.ndarray:
    """Empty cells with at least five of their eight neighbours filled (holes between
    irregular samples, not the outside of an outline) take the worst of those neighbours."""
    rows, cols = value.shape
    pad = np.pad(value, 1, constant_values=np.nan)
    around = np.stack(
        [pad[1 + di : 1 + di + rows, 1 + dj : 1 + dj + cols]
         for di in (-1, 0, 1) for dj in (-1, 0, 1) if di or dj]
    )  # fmt: skip
    filled = np.isfinite(around)
    hole = ~np.isfinite(value) & (filled.sum(axis=0) >= 5)
    if not hole.any():
        return value
    mag = np.where(filled, np.abs(around), -1.0)
    pick = np.take_along_axis(around, mag.argmax(axis=0)[None], axis=0)[0]
    out = value.copy()
    out[hole] = pick[hole]
    return out


class DeviationPicture:
    """A plan-view picture of signed deviation (matplotlib Agg canvas, no pyplot state): the
    :func:`worst_raster` of the samples, grey where unknown, outlines with labels, a scale bar
    and a colour bar in mm. One picture draws many pieces in turn (:meth:`show`, then
    :meth:`save`): the figure, axes and colour bar are made once, which is most of the cost.

    Parameters
    ----------
    tolerance_mm : float
        The colour bar's ends.
    size_in : (float, float)
        Figure size in inches (100 dpi).
    margins : (left, right, bottom, top)
        Figure fractions for the axes and colour bar.
    bar_label : str
        Label of the colour bar.
    cells : int
        Raster cells along the longer side at most.
    """

    def __init__(
        self,
        tolerance_mm: float,
        size_in: tuple[float, float] = (9.0, 6.0),
        margins: tuple[float, float, float, float] = (0.1, 0.98, 0.1, 0.93),
        bar_label: str = "signed deviation (mm): + foam left, - gouge",
        cells: int = 400,
    ) -> None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        self.cells = int(cells)
        self.fig = Figure(figsize=size_in, dpi=100)
        FigureCanvasAgg(self.fig)
        # the layout in inches: the margins' room on the left, the colour bar's block on the
        # right (a fifth of the space between the margins, as matplotlib's own colour bar
        # layout gives it), the height fixed; the width in between is the data's (_fit_width)
        width, height = size_in
        left, right, bottom, top = margins
        between = (right - left) * width
        self._height_in = float(height)
        self._rows = (float(bottom), float(top))
        self._left_in = left * width
        self._bar_block_in = (1.0 - right) * width + 0.2 * between
        self._bar_pad_in = 0.05 * between
        self._widest_in = 0.8 * between
        ax = self.ax = self.fig.add_axes((0.0, bottom, 1.0, top - bottom))
        ax.set_anchor("C")
        self._bar_ax = self.fig.add_axes((0.0, bottom, 0.01, top - bottom))
        opts = {"origin": "lower", "interpolation": "nearest"}
        self.grey = ax.imshow(np.zeros((1, 1, 4)), **opts)
        self.image = ax.imshow(
            np.full((1, 1), np.nan),
            cmap=deviation_cmap(),
            norm=deviation_norm(tolerance_mm),
            **opts,
        )
        bar = self.fig.colorbar(self.image, cax=self._bar_ax, extend="both")
        bar.set_label(bar_label)
        ax.set_aspect("equal")
        ax.set_xlabel("plan x (mm, part frame)")
        ax.set_ylabel("plan y (mm, part frame)")
        self._drawn: list = []
        self._fit_width(self._widest_in)

    def _fit_width(self, axes_in: float) -> None:
        """Size the figure to axes ``axes_in`` inches wide (the colour bar beside them)."""
        bottom, top = self._rows
        axes_in = max(float(axes_in), _NARROWEST_IN)
        width = self._left_in + axes_in + self._bar_block_in
        self.fig.set_size_inches(width, self._height_in)
        self.ax.set_position((self._left_in / width, bottom, axes_in / width, top - bottom))
        # the bar: 85 % of the axes' height, one twentieth of that wide, beside the axes
        tall = 0.85 * (top - bottom)
        wide_in = tall * self._height_in / 20.0
        at_in = self._left_in + axes_in + self._bar_pad_in
        self._bar_ax.set_position(
            (at_in / width, bottom + 0.5 * (top - bottom - tall), wide_in / width, tall)
        )

    def show(self, xy, signed, outlines=(), labels=None, title: str = "") -> None:
        """Draw samples ``xy (n, 2)`` mm with deviations ``signed (n,)`` mm, the outlines
        ``(k, 2)`` mm with a label each (empty: none), and a title; replaces what was shown."""
        from matplotlib.ticker import FixedLocator
        from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

        from wirecut.export.maps import scale_bar_length

        for artist in self._drawn:
            artist.remove()
        self._drawn = []
        ax = self.ax
        value, unknown, extent = worst_raster(xy, signed, self.cells)
        grey = np.zeros((*unknown.shape, 4))
        grey[unknown] = (UNKNOWN, UNKNOWN, UNKNOWN, 1.0)
        self.grey.set_data(grey)
        self.grey.set_extent(extent)
        self.image.set_data(value)
        self.image.set_extent(extent)
        x0, x1, y0, y1 = extent
        outlines = [np.asarray(o, float).reshape(-1, 2) for o in outlines]
        labels = list(labels) if labels is not None else [""] * len(outlines)
        for o, label in zip(outlines, labels, strict=True):
            if len(o) < 2:
                continue
            x0, x1 = min(x0, float(o[:, 0].min())), max(x1, float(o[:, 0].max()))
            y0, y1 = min(y0, float(o[:, 1].min())), max(y1, float(o[:, 1].max()))
            closed = np.vstack([o, o[:1]])
            self._drawn += ax.plot(closed[:, 0], closed[:, 1], color="black", lw=1.0)
            if label:
                cx, cy = o.mean(axis=0)
                box = {"boxstyle": "round,pad=0.2", "fc": "white", "ec": "none", "alpha": 0.8}
                self._drawn.append(
                    ax.text(
                        cx, cy, label, ha="center", va="center", fontsize=9, weight="bold", bbox=box
                    )  # fmt: skip
                )
        # the data keep their aspect within the widest axes the layout allows and the fixed
        # height; the figure is then made as wide as the data drawn need (a narrow piece gets
        # a narrow picture, not a wide one half empty)
        dpi = self.fig.dpi
        bottom, top = self._rows
        w_px, h_px = self._widest_in * dpi, (top - bottom) * self._height_in * dpi
        dx, dy = max(x1 - x0, 1e-9), max(y1 - y0, 1e-9)
        # a band below the data holds the scale bar, so that it never hides a sample
        band = 0.0
        for _ in range(4):  # the band's height in mm depends on the scale it changes
            band = _BAR_BAND_PX / min(w_px / dx, h_px / (dy + band))
        ax.set_xlim(x0, x1)
        ax.set_ylim(y0 - band, y1)
        shown = min(w_px, h_px * dx / (dy + band)) / dpi
        # the title is centred over the axes and must stay inside the figure
        ax.set_title(title)
        title_in = ax.title.get_window_extent(self.fig.canvas.get_renderer()).width / dpi
        room = 2.0 * min(self._left_in, self._bar_block_in) - 0.3
        self._fit_width(max(shown, title_in - room))
        # as many x ticks as labels of four or five digits fit across the drawn width
        step = _round_up(dx / max(int(shown / 0.6), 1))
        ticks = np.arange(np.ceil(x0 / step), x1 / step + 1e-9) * step
        while len(ticks) == 0:  # a narrow piece between two round values: a finer step
            step = _round_up(step / 2.5)
            ticks = np.arange(np.ceil(x0 / step), x1 / step + 1e-9) * step
        ax.xaxis.set_major_locator(FixedLocator(ticks))
        bar = scale_bar_length(dx)  # it fits across the drawn width
        sizebar = AnchoredSizeBar(
            ax.transData,
            bar,
            f"{bar:g} mm",
            "lower right",
            frameon=True,
            size_vertical=(x1 - x0) * 0.004,
            pad=0.2,
            borderpad=0.3,
            sep=2,
            fontproperties={"size": 8},
        )
        ax.add_artist(sizebar)
        self._drawn.append(sizebar)

    def save(self, path) -> None:
        """Write the picture as PNG (no software tag, no time: the same bytes every run)."""
        self.fig.savefig(path, format="png", metadata={"Software": None})


#: Height (pixels) of the band kept free under a picture's data for its scale bar.
_BAR_BAND_PX = 30.0
#: Narrowest axes (inches) of a picture: room for an x tick label or two (the title may
#: reach over the margins).
_NARROWEST_IN = 0.9


def _round_up(x: float) -> float:
    """The smallest of 1, 2, 5 times a power of ten that is at least ``x`` (> 0)."""
    p = 10.0 ** math.floor(math.log10(max(x, 1e-12)))
    return next(m * p for m in (1.0, 2.0, 5.0, 10.0) if m * p >= x - 1e-12)
