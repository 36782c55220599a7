"""The rationalized surface: what the planned cuts leave, as a mesh and as a deviation map.

:func:`rational_mesh` joins the fitted cuts of all pieces into one triangle mesh in the part
frame, each vertex carrying the signed deviation (mm, + excess foam left on the part, - gouge)
of the nearest target sample of its piece, as a vertex attribute ``deviation_mm`` and as a
vertex colour, on the project's one deviation scale (:mod:`wirecut.export.palette`): deep blue
(gouge at -tol) through white (0) to deep red (excess at +tol), clipped beyond the tolerance.

:func:`write_deviation_map` draws the plan view of the signed deviation of the samples with a
colour bar in mm and a scale bar (matplotlib, Agg canvas, no timestamps in the file); the
report's plan view is the same picture.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import trimesh
from scipy.spatial import cKDTree

from wirecut.errors import OutputError
from wirecut.export.palette import deviation_colors
from wirecut.geometry.frames import apply, invert

__all__ = ["deviation_colors", "rational_mesh", "write_rational_mesh", "write_deviation_map"]


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
    labels: list[str] | None = None,
    title: str = "",
) -> Path:
    """Plan view of the signed deviation (mm) of samples, PNG, colour bar in mm, scale bar.

    Parameters
    ----------
    samples_plan_xy : (n, 2) float, mm, part plan view
        Sample positions.
    signed : (n,) float, mm
        Signed deviation (NaN: outside any cut, drawn grey).
    tol : float, mm
        Colour scale ends at +-tol (:mod:`wirecut.export.palette`).
    path_png : path
        Output file.
    outlines : list of (k, 2) float arrays, mm, part plan view, optional
        Piece outlines drawn on top.
    labels : list of str, optional
        A label per outline, written at its centre.
    title : str
        Title above the picture.
    """
    from wirecut.export.palette import DeviationPicture

    picture = DeviationPicture(tol)
    picture.show(samples_plan_xy, signed, outlines or [], labels, title)
    try:
        picture.save(path_png)
    except OSError as exc:
        raise OutputError(f"cannot write {path_png}: {exc.strerror or exc}") from None
    return Path(path_png)
