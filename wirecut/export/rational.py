"""The rationalized surface: what the planned cuts leave, as a mesh and as a deviation map.

:func:`rational_mesh` joins the fitted cuts of all pieces into one triangle mesh in the part
frame, each vertex carrying the signed deviation (mm, + excess foam left on the part, - gouge)
of the nearest target sample of its piece, as a vertex attribute ``deviation_mm`` and as a
vertex colour. The colour scale is our own diverging ramp: deep blue (gouge at -tol) through
white (0) to deep red (excess at +tol), clipped beyond the tolerance.

:func:`write_deviation_map` draws the plan view of the signed deviation of the samples with a
colour bar in mm and a scale bar (matplotlib, Agg backend, no timestamps in the file).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import trimesh
from scipy.spatial import cKDTree

from wirecut.errors import OutputError
from wirecut.geometry.frames import apply, invert

__all__ = ["deviation_colors", "rational_mesh", "write_rational_mesh", "write_deviation_map"]

# the diverging ramp: (position in -1..1, RGB 0..1)
_RAMP = np.array(
    [
        [-1.0, 0.09, 0.20, 0.55],
        [-0.5, 0.38, 0.60, 0.86],
        [0.0, 0.97, 0.97, 0.95],
        [0.5, 0.93, 0.55, 0.38],
        [1.0, 0.62, 0.08, 0.10],
    ]
)


def deviation_colors(signed: np.ndarray, tolerance_mm: float) -> np.ndarray:
    """RGBA colours (n, 4) uint8 of signed deviations (n,) mm on the ramp, +-tol at the ends.

    NaN (no deviation known) is drawn mid grey."""
    d = np.asarray(signed, float)
    u = np.clip(d / max(float(tolerance_mm), 1e-12), -1.0, 1.0)
    rgb = np.column_stack([np.interp(u, _RAMP[:, 0], _RAMP[:, i]) for i in (1, 2, 3)])
    rgb[~np.isfinite(d)] = 0.5
    rgba = np.column_stack([rgb, np.ones(len(d))])
    return np.round(rgba * 255).astype(np.uint8)


def _vertex_deviation(fit: Any, verts_machine: np.ndarray) -> np.ndarray:
    """Signed deviation (mm) of the target sample nearest in (x, z) to each cut vertex."""
    samples = getattr(fit, "samples", None)
    signed = np.asarray(fit.report.signed, float)
    if samples is None or len(signed) == 0:
        return np.full(len(verts_machine), np.nan)
    pts = samples.points
    ok = np.isfinite(signed)
    if not ok.any():
        return np.full(len(verts_machine), np.nan)
    tree = cKDTree(pts[ok][:, [0, 2]])
    _, idx = tree.query(verts_machine[:, [0, 2]])
    return signed[ok][idx]


def rational_mesh(
    fits: list[tuple[Any, np.ndarray]],
    tolerance_mm: float | None = None,
    steps_along_wire: int = 8,
) -> trimesh.Trimesh:
    """One mesh (part frame, mm) of the cut surfaces of all pieces.

    Parameters
    ----------
    fits : list of (RuledFit, (4, 4) part_to_machine)
        The fitted cut of each piece and the transform of its setup.
    tolerance_mm : float, optional
        End of the colour scale (mm); default the largest |deviation| of all pieces.
    steps_along_wire : int
        Rows of triangles per strip along the wire.

    Returns
    -------
    trimesh.Trimesh
        Vertices in the part frame, ``visual.vertex_colors`` (n, 4) uint8 and
        ``vertex_attributes["deviation_mm"]`` (n,) float, mm.
    """
    all_v, all_f, all_d = [], [], []
    offset = 0
    for fit, part_to_machine in fits:
        verts, faces = fit.cut.to_mesh(steps_along_wire)
        all_d.append(_vertex_deviation(fit, verts))
        all_v.append(apply(invert(np.asarray(part_to_machine, float)), verts))
        all_f.append(faces + offset)
        offset += len(verts)
    if not all_v:
        mesh = trimesh.Trimesh(np.zeros((0, 3)), np.zeros((0, 3), int), process=False)
        mesh.vertex_attributes["deviation_mm"] = np.zeros(0)
        return mesh
    dev = np.concatenate(all_d)
    if tolerance_mm is None:
        finite = np.abs(dev[np.isfinite(dev)])
        tolerance_mm = float(finite.max()) if len(finite) and finite.max() > 0 else 1.0
    mesh = trimesh.Trimesh(
        np.vstack(all_v),
        np.vstack(all_f),
        vertex_colors=deviation_colors(dev, tolerance_mm),
        process=False,
    )
    mesh.vertex_attributes["deviation_mm"] = dev
    return mesh


def write_rational_mesh(mesh: trimesh.Trimesh, path: str | Path) -> Path:
    """Write the rationalized mesh as .stl, .obj or .ply (binary; PLY keeps ``deviation_mm``)."""
    path = Path(path)
    kind = path.suffix.lower().lstrip(".")
    if kind not in ("stl", "obj", "ply"):
        raise OutputError(f"rationalized mesh path {path} must end in .stl, .obj or .ply")
    try:
        if kind == "ply":
            data = trimesh.exchange.ply.export_ply(mesh, encoding="binary", include_attributes=True)
        elif kind == "stl":
            data = trimesh.exchange.stl.export_stl(mesh)
        else:
            data = trimesh.exchange.obj.export_obj(mesh, include_color=True, header=None)
        path.write_bytes(data if isinstance(data, bytes) else data.encode("utf-8"))
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc.strerror or exc}") from None
    return path


def write_deviation_map(
    samples_plan_xy: np.ndarray,
    signed: np.ndarray,
    tol: float,
    path_png: str | Path,
    outlines: list[np.ndarray] | None = None,
) -> Path:
    """Plan view of the signed deviation (mm) of samples, PNG, colour bar in mm, scale bar.

    Parameters
    ----------
    samples_plan_xy : (n, 2) float, mm, part plan view
        Sample positions.
    signed : (n,) float, mm
        Signed deviation (NaN: outside any cut, drawn grey).
    tol : float, mm
        Colour scale ends at +-tol.
    path_png : path
        Output file.
    outlines : list of (k, 2) float arrays, mm, part plan view, optional
        Piece outlines drawn on top.
    """
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib import pyplot as plt
    from matplotlib.colors import LinearSegmentedColormap
    from mpl_toolkits.axes_grid1.anchored_artists import AnchoredSizeBar

    xy = np.asarray(samples_plan_xy, float).reshape(-1, 2)
    d = np.asarray(signed, float)
    cmap = LinearSegmentedColormap.from_list(
        "wirecut-deviation", [((p + 1) / 2, tuple(c)) for p, *c in _RAMP]
    )
    fig, ax = plt.subplots(figsize=(8, 6), dpi=100)
    try:
        ok = np.isfinite(d)
        if (~ok).any():
            ax.scatter(xy[~ok, 0], xy[~ok, 1], s=1, c="0.6", linewidths=0)
        size = float(np.clip(4e4 / max(len(xy), 1), 0.5, 12.0))
        art = ax.scatter(
            xy[ok, 0], xy[ok, 1], s=size, c=d[ok], cmap=cmap, vmin=-tol, vmax=tol, linewidths=0
        )
        for o in outlines or []:
            o = np.asarray(o, float)
            ax.plot(np.r_[o[:, 0], o[0, 0]], np.r_[o[:, 1], o[0, 1]], color="k", lw=0.8)
        ax.set_aspect("equal")
        ax.set_xlabel("plan u (mm)")
        ax.set_ylabel("plan v (mm)")
        bar = fig.colorbar(art, ax=ax)
        bar.set_label("signed deviation (mm): + foam left, - gouge")
        if len(xy):
            extent = float(np.ptp(xy[:, 0])) or 1.0
            length = 10 ** np.floor(np.log10(extent / 4))
            ax.add_artist(
                AnchoredSizeBar(
                    ax.transData, length, f"{length:g} mm", "lower right", frameon=False
                )
            )
        fig.savefig(path_png, format="png", metadata={"Software": None})
    except OSError as exc:
        raise OutputError(f"cannot write {path_png}: {exc.strerror or exc}") from None
    finally:
        plt.close(fig)
    return Path(path_png)
