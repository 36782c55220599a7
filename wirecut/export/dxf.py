"""DXF drawings of the pieces: plan outlines, end-face profiles and the nesting sheet.

One drawing (millimetres, ``$INSUNITS = 4``) with three areas side by side in model space:

* **plan** (at the part plan origin): each piece's region as a closed LWPOLYLINE on layer
  ``<id>_REGION`` (holes as closed polylines on the same layer) and its id as TEXT on ``LABELS``;
* **end faces** (below the plan): per piece, the two directrices of its ruled cut (machine x, y
  of the left and right end faces) as open polylines on ``<id>_FACE_LEFT`` and
  ``<id>_FACE_RIGHT``, each inside the block's end-face rectangle (closed, ``<id>_BLOCK``),
  left face then right face, pieces one after another along x;
* **nesting** (right of the plan and the end faces): each raw block in plan (length x width)
  and elevation (length x height) as closed rectangles on ``NEST_STOCK``, its blanks as closed
  rectangles on ``NEST_BLANK``, labelled on ``LABELS``.

The output is byte-for-byte repeatable: ezdxf's fixed-metadata switch pins ``$TDCREATE``,
``$TDUPDATE``, ``$FINGERPRINTGUID`` and ``$VERSIONGUID`` while the file is written, and
entity handles are handed out in drawing order. Text taken from the user (stock names, ids) is
made plain: control characters removed, DXF ``%%`` codes and ``^`` carets neutralised.
"""

from __future__ import annotations

import io
from collections.abc import Sequence
from pathlib import Path

import ezdxf
import numpy as np

from wirecut.export.safe_output import atomic_write_text
from wirecut.pieces.piece import Piece
from wirecut.pieces.stock import Allocation

__all__ = ["plain_text", "layer_name", "build_dxf", "dxf_text", "write_dxf", "LAYERS"]

#: Layers that do not depend on a piece: purpose -> ACI colour.
LAYERS = {"LABELS": 7, "NEST_STOCK": 8, "NEST_BLANK": 3}
_PIECE_LAYERS = {"REGION": 5, "FACE_LEFT": 1, "FACE_RIGHT": 6, "BLOCK": 8}
_GAP = 200.0  # mm between drawing areas and between pieces in a row
_TEXT_H = 40.0  # mm


def plain_text(value: object, limit: int = 60) -> str:
    """``value`` as plain one-line DXF text: no control characters, no ``%%`` or ``^`` codes."""
    s = "".join(c for c in str(value) if c.isprintable() and ord(c) >= 32)
    s = s.replace("%%", "%").replace("^", "'")
    return s[:limit] or "-"


def layer_name(value: object) -> str:
    """A valid DXF layer name from ``value`` (characters ``<>/\\":;?*|=`'`` replaced)."""
    bad = set("<>/\\\":;?*|=`'")
    s = "".join("_" if c in bad else c for c in plain_text(value, 200))
    return s.strip() or "_"


def _layer(doc, name: str, color: int) -> str:
    name = layer_name(name)
    if name not in doc.layers:
        doc.layers.add(name, color=color)
    return name


def _closed(msp, points: np.ndarray, layer: str) -> None:
    pts = [(float(x), float(y)) for x, y in np.asarray(points, float)]
    msp.add_lwpolyline(pts, close=True, dxfattribs={"layer": layer})


def _rect(msp, x0: float, y0: float, w: float, h: float, layer: str) -> None:
    _closed(msp, np.array([[x0, y0], [x0 + w, y0], [x0 + w, y0 + h], [x0, y0 + h]]), layer)


def _text(msp, text: str, x: float, y: float, height: float = _TEXT_H) -> None:
    msp.add_text(plain_text(text), height=height, dxfattribs={"layer": "LABELS", "insert": (x, y)})


def _centre(outline: np.ndarray) -> tuple[float, float]:
    import shapely

    p = shapely.Polygon(outline).representative_point()
    return float(p.x), float(p.y)


def build_dxf(pieces: Sequence[Piece], allocation: Allocation | None):
    """The drawing as an ezdxf document (nothing written)."""
    doc = ezdxf.new("R2010", setup=False)
    doc.header["$INSUNITS"] = 4  # millimetres
    doc.header["$MEASUREMENT"] = 1  # metric
    for name, color in LAYERS.items():
        _layer(doc, name, color)
    msp = doc.modelspace()

    # --- plan
    outlines = [np.asarray(p.region_plan, float) for p in pieces]
    allpts = np.vstack(outlines) if outlines else np.zeros((1, 2))
    pmin, pmax = allpts.min(axis=0), allpts.max(axis=0)
    for p, outline in zip(pieces, outlines, strict=True):
        layer = _layer(doc, f"{p.id}_REGION", _PIECE_LAYERS["REGION"])
        _closed(msp, outline, layer)
        extra = p.extra if isinstance(p.extra, dict) else {}
        for hole in extra.get("holes_plan", []):
            _closed(msp, np.asarray(hole, float), layer)
        cx, cy = _centre(outline)
        _text(msp, p.id, cx, cy)

    # --- end faces, below the plan
    x = float(pmin[0])
    top = float(pmin[1]) - _GAP
    for p in pieces:
        b = p.block
        w, h = b.x_mm[1] - b.x_mm[0], b.y_mm[1] - b.y_mm[0]
        y0 = top - h
        cut = getattr(getattr(p, "fit", None), "cut", None)
        for side, k in (("LEFT", 0), ("RIGHT", 1)):
            ox = x + k * (w + _GAP / 2) - b.x_mm[0]
            oy = y0 - b.y_mm[0]
            _rect(msp, x + k * (w + _GAP / 2), y0, w, h, _layer(doc, f"{p.id}_BLOCK", 8))
            if cut is not None:
                prof = cut.left if k == 0 else cut.right
                layer = _layer(doc, f"{p.id}_FACE_{side}", _PIECE_LAYERS[f"FACE_{side}"])
                pts = [(float(px + ox), float(py + oy)) for px, py in prof]
                msp.add_lwpolyline(pts, close=False, dxfattribs={"layer": layer})
            zf = b.z_mm[k]
            _text(
                msp, f"{p.id} {side.lower()} z={zf:.1f}", x + k * (w + _GAP / 2), y0 - 1.5 * _TEXT_H
            )
        x += 2 * w + 1.5 * _GAP

    # --- nesting, right of the plan
    if allocation is not None:
        nx = max(float(pmax[0]), x) + 2 * _GAP  # right of both the plan and the end faces
        ny = float(pmax[1])
        for blk in allocation.blocks:
            length, width, height = (float(v) for v in blk.size_mm)
            label = f"{blk.stock} #{blk.index + 1} {length:.0f} x {width:.0f} x {height:.0f}"
            _text(msp, label, nx, ny + 0.5 * _TEXT_H)
            _rect(msp, nx, ny - width, length, width, "NEST_STOCK")  # plan: x length, y width
            ey = ny - width - _GAP - height  # elevation: x length, y height
            _rect(msp, nx, ey, length, height, "NEST_STOCK")
            for pl in allocation.placements:
                if (pl.stock, pl.block_index) != (blk.stock, blk.index):
                    continue
                o, s = np.asarray(pl.origin_mm, float), np.asarray(pl.size_mm, float)
                _rect(msp, nx + o[0], ny - width + o[1], s[0], s[1], "NEST_BLANK")
                _rect(msp, nx + o[0], ey + o[2], s[0], s[2], "NEST_BLANK")
                th = min(_TEXT_H, 0.3 * min(s[0], s[1], s[2]))
                _text(msp, pl.piece_id, nx + o[0] + th, ny - width + o[1] + th, th)
                _text(msp, pl.piece_id, nx + o[0] + th, ey + o[2] + th, th)
            ny = ey - 2 * _GAP
    return doc


def _register_classes(doc) -> None:
    """Register the CLASSES section's entries in a fixed order before ezdxf writes it.

    ezdxf adds a class for each entity type in use by iterating over a ``set`` of type names,
    whose order follows Python's per-process string hash (PYTHONHASHSEED): the same drawing
    came out with LAYOUT and ACDBPLACEHOLDER swapped from one run to the next. Registered here
    first (ezdxf's required list, then the types in use sorted by name), they keep this order;
    ezdxf skips classes already registered."""
    from ezdxf.sections import classes

    doc.commit_pending_changes()  # entities made at export time count as in use too
    # ezdxf's own list of the classes a version requires, in its order (module data, not API:
    # without it the sorted types alone still fix the order)
    required = getattr(classes, "REQUIRED_CLASSES", {})
    names = required.get(doc.dxfversion, getattr(classes, "REQ_R2004", ()))
    for name in [*names, *sorted(doc.entitydb.dxf_types_in_use())]:
        doc.classes.add_class(name)


def dxf_text(pieces: Sequence[Piece], allocation: Allocation | None) -> str:
    """The drawing as DXF text, identical for identical input."""
    stream = io.StringIO()
    previous = ezdxf.options.write_fixed_meta_data_for_testing
    # pins dates, GUIDs and ezdxf's creation marker (set when the document is made)
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        doc = build_dxf(pieces, allocation)
        _register_classes(doc)
        doc.write(stream)
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous
    return stream.getvalue()


def write_dxf(pieces: Sequence[Piece], allocation: Allocation | None, path: str | Path) -> Path:
    """Write the pieces' drawing to ``path`` (through a temporary file and a rename).

    Parameters
    ----------
    pieces : sequence of Piece
        Regions (mm, part plan), blocks and fits (machine frame, mm).
    allocation : Allocation or None
        The nesting; None leaves the nesting area out.
    path : str or Path
        The .dxf file to write.

    Returns
    -------
    Path
        The file written.
    """
    return atomic_write_text(path, dxf_text(pieces, allocation))
