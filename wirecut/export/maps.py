"""The ``check`` pictures: a plan-view cuttability map and a curvature histogram (PNG).

Both are drawn with matplotlib's Agg canvas on a private :class:`~matplotlib.figure.Figure`
(no pyplot state), in plan view (:func:`wirecut.geometry.frames.to_plan`: basis e1, e2 of the
plane perpendicular to ``mold.up``). The PNGs carry no timestamp or software tag, so the same
input gives the same bytes.

Each panel is a plan raster (560 pixels along the longer side): every pixel shows the face a
ray from the waste side meets first (exact point-in-triangle casting,
:func:`wirecut.geometry.occlusion.first_hit_faces`), so overhangs show as the wire sees them
and the cost does not grow with the triangle count beyond one lookup per pixel.

Palette of the classes (chosen for this project to differ in lightness as well as hue, so they
stay apart under the common colour-vision deficiencies and in grey print): developable deep blue,
ruled light amber, synclastic mid raspberry. Wire reach uses matplotlib's ``cividis`` (designed
for colour-vision deficiency). Undercut areas are hatched.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np

from wirecut.config import ToleranceSpec
from wirecut.geometry.creases import crease_edges
from wirecut.geometry.cuttability import DEVELOPABLE, RULED, SYNCLASTIC, SurfaceAnalysis
from wirecut.geometry.frames import plan_basis, to_plan
from wirecut.geometry.mesh import TargetSurface
from wirecut.geometry.occlusion import FORK_FACES, first_hit_faces
from wirecut.workers import background

__all__ = [
    "CLASS_COLOURS",
    "write_cuttability_map",
    "write_curvature_histogram",
    "scale_bar_length",
    "axis_label",
]

#: Colour of each class in the map: developable, ruled, synclastic.
CLASS_COLOURS = {DEVELOPABLE: "#1d4e89", RULED: "#f4b942", SYNCLASTIC: "#b83b6b"}
_CLASS_NAMES = {
    DEVELOPABLE: "developable",
    RULED: "ruled (K < 0)",
    SYNCLASTIC: "synclastic (K > 0)",
}
_DPI = 110
_RASTER = 560  # pixels along the longer side of the plan raster of each panel


#: Crease edges drawn on the check map at most (evenly chosen beyond that).
_MAX_CREASE_LINES = 50_000


def scale_bar_length(width_mm: float) -> float:
    """A round length (1, 2 or 5 times a power of ten, mm) close to a fifth of ``width_mm``."""
    target = max(float(width_mm), 1e-9) / 5.0
    power = 10.0 ** np.floor(np.log10(target))
    for m in (5.0, 2.0, 1.0):
        if m * power <= target:
            return m * power
    return power


def _length_label(mm: float) -> str:
    return f"{mm / 1000:g} m" if mm >= 1000 else f"{mm:g} mm"


def axis_label(vector: np.ndarray) -> str:
    """``"part +y"`` for an axis-aligned unit vector, else ``"part (x, y, z)"`` rounded."""
    v = np.asarray(vector, float)
    i = int(np.argmax(np.abs(v)))
    if abs(abs(v[i]) - 1.0) < 1e-9:
        return f"part {'+' if v[i] > 0 else '-'}{'xyz'[i]}"
    return "part (" + ", ".join(f"{c:.2f}" for c in v) + ")"


#: The cuttability map's largest height and width (inches); below the wide width its titles
#: take two lines.
_MAP_HEIGHT_IN = 6.4
_MAP_WIDEST_IN = 13.0
_MAP_WIDE_IN = 11.0
_MAP_NARROWEST_IN = 7.0
_MAP_LOWEST_IN = 4.0


def _map_size(span: np.ndarray) -> tuple[float, float]:
    """Width and height (inches) of the cuttability map for a plan extent ``span`` (2,) mm: two
    panels of the data's aspect with :func:`_decorate`'s margins (x 1.1, y 1.23 spans), plus
    about 2 in across for the colour bar and margins and 1.5 in down for the titles and the
    legend. A tall part narrows the figure at the full height, a wide one lowers it at the
    full width."""
    aspect = 1.1 * float(span[0]) / (1.23 * max(float(span[1]), 1e-9))  # panel width / height
    panel_h = _MAP_HEIGHT_IN - 1.5
    width = 2.0 * panel_h * aspect + 2.0
    if width <= _MAP_WIDEST_IN:
        return float(max(width, _MAP_NARROWEST_IN)), _MAP_HEIGHT_IN
    panel_w = (_MAP_WIDEST_IN - 2.0) / 2.0
    return _MAP_WIDEST_IN, float(max(panel_w / aspect + 1.5, _MAP_LOWEST_IN))


def _save(fig, path: Path) -> None:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    fig.savefig(str(path), dpi=_DPI, metadata={"Software": None}, format="png")


def _decorate(ax, plan: np.ndarray, up: np.ndarray) -> None:
    """Equal aspect, scale bar, and an arrow along plan +e2 labelled with its part direction."""
    from matplotlib.patches import FancyArrow

    lo, hi = plan.min(axis=0), plan.max(axis=0)
    span = np.maximum(hi - lo, 1e-9)
    ax.set_aspect("equal")
    ax.set_xlim(lo[0] - 0.05 * span[0], hi[0] + 0.05 * span[0])
    ax.set_ylim(lo[1] - 0.18 * span[1], hi[1] + 0.05 * span[1])
    ax.set_xticks([])
    ax.set_yticks([])
    bar = scale_bar_length(span[0])
    x0, y0 = lo[0], lo[1] - 0.1 * span[1]
    ax.plot([x0, x0 + bar], [y0, y0], color="black", linewidth=3, solid_capstyle="butt")
    ax.text(x0 + bar / 2, y0 - 0.02 * span[1], _length_label(bar), ha="center", va="top")
    # arrow toward plan +e2 in the lower right corner
    size = 0.08 * max(span)
    ax.add_patch(
        FancyArrow(
            hi[0] - 0.02 * span[0],
            y0 - 0.04 * span[1],
            0.0,
            size,
            width=size * 0.08,
            head_width=size * 0.3,
            head_length=size * 0.3,
            length_includes_head=True,
            color="black",
        )
    )
    _, e2, _ = plan_basis(up)
    ax.text(
        hi[0] - 0.04 * span[0],
        y0 - 0.04 * span[1] + size / 2,
        axis_label(e2),
        ha="right",
        va="center",
    )


def write_cuttability_map(
    target: TargetSurface,
    analysis: SurfaceAnalysis,
    path_png: str | Path,
    tolerance: float | ToleranceSpec,
    meanwhile: Callable[[], None] | None = None,
) -> Path:
    """Write the plan-view map: classes (left) and wire reach (right), undercut hatched.

    Parameters
    ----------
    target : TargetSurface
        The analysed surface (part frame, mm).
    analysis : SurfaceAnalysis
        Its analysis (per-vertex classes, reach, undercut).
    path_png : str or Path
        Output PNG file.
    tolerance : float or ToleranceSpec
        Surface tolerance (mm) shown in the title (with the policy when a ToleranceSpec).
    meanwhile : callable () -> None, optional
        Other work (another picture) for this process while a worker process casts the
        raster's rays, for a large mesh; called before the map is drawn in any case.

    Returns
    -------
    Path
        The file written.
    """
    if isinstance(tolerance, ToleranceSpec):
        tol_text = f"tolerance {tolerance.surface_mm:g} mm, {tolerance.policy.value}"
    else:
        tol_text = f"tolerance {float(tolerance):g} mm"
    path = Path(path_png)
    plan = to_plan(target.vertices, target.up)
    # a plan raster of what a wire from the waste side meets first (exact ray casting per pixel)
    lo, hi = plan.min(axis=0), plan.max(axis=0)
    span = np.maximum(hi - lo, 1e-9)
    nx = _RASTER
    ny = int(np.clip(round(_RASTER * span[1] / span[0]), 2, _RASTER))
    if span[1] > span[0]:
        ny, nx = _RASTER, int(np.clip(round(_RASTER * span[0] / span[1]), 2, _RASTER))
    xs = lo[0] + (np.arange(nx) + 0.5) * span[0] / nx
    ys = lo[1] + (np.arange(ny) + 0.5) * span[1] / ny
    gx, gy = np.meshgrid(xs, ys)
    pixels = np.column_stack([gx.ravel(), gy.ravel()])
    # undercut faces (two or more undercut corners), hatched wherever they lie in plan: most
    # lie under another part of the surface, hidden from the wire
    face_under = analysis.undercut[target.faces].sum(axis=1) >= 2
    rays = background(
        lambda: first_hit_faces(target, pixels, face_under),
        min_size=FORK_FACES,
        size=len(target.faces),
    )
    try:
        from matplotlib.colors import BoundaryNorm, ListedColormap
        from matplotlib.figure import Figure
        from matplotlib.patches import Patch

        if meanwhile is not None:
            meanwhile()
    except BaseException:
        rays.wait()  # no worker is left behind
        raise
    face, hidden_under = rays.result()
    face, hidden_under = face.reshape(ny, nx), hidden_under.reshape(ny, nx)
    empty = face < 0
    fidx = np.where(empty, 0, face)

    kinds = analysis.kind[target.faces]
    votes = np.stack([(kinds == c).sum(axis=1) for c in (DEVELOPABLE, RULED, SYNCLASTIC)], axis=1)
    face_kind = np.argmax(votes, axis=1)
    face_reach = analysis.wire_reach_mm[target.faces].mean(axis=1)

    # as wide and as high as the two panels need (a long narrow part gets a narrow figure,
    # not two slivers with the width between them empty); titles wrap when narrow
    width, height = _map_size(span)
    narrow = width < _MAP_WIDE_IN
    fig = Figure(figsize=(width, height), layout="constrained")
    axes = fig.subplots(1, 2)
    cmap = ListedColormap([CLASS_COLOURS[c] for c in (DEVELOPABLE, RULED, SYNCLASTIC)])
    norm = BoundaryNorm([-0.5, 0.5, 1.5, 2.5], 3)
    extent = (lo[0], hi[0], lo[1], hi[1])
    style = {"origin": "lower", "extent": extent, "interpolation": "nearest", "aspect": "equal"}
    axes[0].imshow(np.ma.masked_array(face_kind[fidx], empty), cmap=cmap, norm=norm, **style)
    top = float(max(analysis.wire_reach_mm.max(), 1.0))
    pc = axes[1].imshow(
        np.ma.masked_array(face_reach[fidx], empty), cmap="cividis", vmin=0.0, vmax=top, **style
    )
    handles = [Patch(color=CLASS_COLOURS[c], label=_CLASS_NAMES[c]) for c in CLASS_COLOURS]
    mid, d = crease_edges(target)
    if len(mid):  # folds and steps, as thin lines over both panels
        from matplotlib.collections import LineCollection
        from matplotlib.lines import Line2D

        keep = np.linspace(0, len(mid) - 1, min(len(mid), _MAX_CREASE_LINES)).astype(np.int64)
        segs = np.stack([mid[keep] - 0.5 * d[keep], mid[keep] + 0.5 * d[keep]], axis=1)
        for ax in axes:
            ax.add_collection(LineCollection(segs, colors="black", linewidths=0.6))
        handles.append(Line2D([], [], color="black", linewidth=0.6, label="crease"))
    under = (hidden_under & ~empty).astype(float)
    if under.any():
        for ax in axes:
            ax.contourf(gx, gy, under, levels=[0.5, 1.5], colors="none", hatches=["////"])
        handles.append(Patch(facecolor="white", edgecolor="black", hatch="////", label="undercut"))
    fig.legend(  # below both panels, inside the figure whatever its width
        handles=handles,
        loc="outside lower center",
        ncol=len(handles),
        fontsize=8,
        frameon=False,
    )
    bar = fig.colorbar(pc, ax=axes[1], shrink=0.8)
    bar.set_label("wire reach, mm")
    gap = "\n" if narrow else " "
    axes[0].set_title(f"surface class{gap}(as seen from the waste side)")
    axes[1].set_title(
        f"wire reach: longest straight wire{gap}within tolerance (cap {analysis.extent_mm:.0f} mm)",
        fontsize=10,
    )
    for ax in axes:
        _decorate(ax, plan, target.up)
    summary = analysis.to_json()
    fig.suptitle(
        f"{target.source}: plan view, {tol_text};{gap}developable "
        f"{summary['developable_area_fraction'] * 100:.0f} %, ruled "
        f"{summary['ruled_area_fraction'] * 100:.0f} %, synclastic "
        f"{summary['synclastic_area_fraction'] * 100:.0f} %, undercut "
        f"{summary['undercut_area_fraction'] * 100:.0f} %"
    )
    _save(fig, path)
    return path


def write_curvature_histogram(analysis: SurfaceAnalysis, path_png: str | Path) -> Path:
    """Write the area-weighted histograms of Gaussian curvature and of wire reach (PNG).

    Parameters
    ----------
    analysis : SurfaceAnalysis
    path_png : str or Path
        Output PNG file.

    Returns
    -------
    Path
        The file written.
    """
    from matplotlib.figure import Figure

    path = Path(path_png)
    cu = analysis.curvature
    inside = cu.interior
    k = cu.gaussian[inside] * 1e6  # 1/mm^2 -> 1/m^2
    w = analysis.vertex_area[inside] / max(float(analysis.vertex_area.sum()), 1e-300)
    fig = Figure(figsize=(11.0, 4.4), layout="constrained")
    ax_k, ax_r = fig.subplots(1, 2)
    if k.size:
        lo, hi = np.percentile(k, [0.5, 99.5])
        if hi - lo <= 1e-12 * max(abs(lo), abs(hi), 1.0):
            lo, hi = lo - 0.5, hi + 0.5
        ax_k.hist(np.clip(k, lo, hi), bins=60, range=(lo, hi), weights=w * 100, color="#1d4e89")
    ax_k.axvline(0.0, color="black", linewidth=1)
    ax_k.set_xlabel("Gaussian curvature K, 1/m^2 (interior vertices, 0.5-99.5 percentile)")
    ax_k.set_ylabel("share of area, %")
    ax_k.set_title("Gaussian curvature: < 0 ruled-like, > 0 synclastic")
    r = analysis.wire_reach_mm
    wr = analysis.vertex_area / max(float(analysis.vertex_area.sum()), 1e-300)
    top = max(float(r.max()), 1.0)
    ax_r.hist(r, bins=60, range=(0.0, top), weights=wr * 100, color="#b83b6b")
    ax_r.axvline(analysis.min_width_mm, color="black", linestyle="--", linewidth=1)
    ax_r.text(
        analysis.min_width_mm,
        ax_r.get_ylim()[1] * 0.95,
        f" min width {analysis.min_width_mm:g} mm",
        va="top",
    )
    ax_r.set_xlabel("wire reach, mm")
    ax_r.set_ylabel("share of area, %")
    ax_r.set_title(f"wire reach (tolerance {analysis.tolerance_mm:g} mm, {analysis.policy.value})")
    _save(fig, path)
    return path
