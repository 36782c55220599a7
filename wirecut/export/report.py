"""The HTML report of a plan: one self-contained page that opens offline and prints.

:func:`write_report` writes ``out_dir/report.html`` and its pictures in ``out_dir/report_files/``
(PNG plots from matplotlib; the face profiles and tower paths as inline SVG). The page has a
summary, the findings, the safety cautions, a plan view of the pieces over the deviation map,
a 3D view of the target the reader turns with the mouse (a small canvas viewer of our own,
``wirecut/data/report_viewer.js``, inlined: see docs/reading-the-report.md for why), and one
setup sheet per piece.

Every number on the page is read from ``ReportData.plan_json`` or from the arrays of
:class:`ReportData`; nothing is recomputed here except the colours and the drawings. Numbers the
page shows from plan.json carry ``data-key`` attributes naming their plan.json key, so a test
can compare them. All user text is HTML-escaped. The output is deterministic (no timestamps,
PNG metadata without a software version).
"""

from __future__ import annotations

import html
import json
import math
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

import numpy as np

from wirecut.errors import OutputError
from wirecut.export.palette import DeviationPicture, deviation_colors
from wirecut.workers import background, worker_count

__all__ = ["PieceSheet", "ReportData", "SAFETY_CAUTIONS", "write_report"]

SAFETY_CAUTIONS: tuple[str, ...] = (
    "The wire and its supply are hot enough to burn skin: switch the heat off before reaching "
    "near the wire, and isolate the supply before touching it or the towers' wiring.",
    "Overheated polystyrene gives off styrene and other fumes: cut at the lowest heat that cuts "
    "clean, extract or ventilate at the wire, and keep exposure within the occupational limits "
    "that apply where you work.",
    "EPS burns: keep an extinguisher at the machine and never leave a cut running unattended.",
    "The mold carries wet concrete, which is heavy: the strength of the mold, its supports and "
    "its ties are for licensed engineering practice, not for this report.",
    "Follow local codes and the machine's own manual; this report does not replace them.",
)
"""Default safety cautions shown on every report (docs/safety.md has the full text)."""


@dataclass(frozen=True)
class PieceSheet:
    """What a piece's setup sheet draws, beyond the numbers in plan.json.

    Attributes
    ----------
    id : str
        Piece id, the key into ``plan_json["pieces"]``.
    region_plan : (k, 2) float, mm, part plan view
        Outline of the piece's region (first point not repeated).
    sample_plan_xy : (n, 2) float, mm, part plan view
        Target sample positions of the piece.
    sample_deviation : (n,) float, mm
        Signed deviation at the samples (+ excess foam on the waste side, - gouge).
    left_profile, right_profile : (k, 2) float, mm, machine frame (x, y)
        The cut's profile on the left and right block face.
    towers : (m, 4) float, mm, machine frame
        Tower path (X, Y, U, V) of the program, in order.
    kerf_left_mm, kerf_right_mm : (2,) float, mm
        Least and largest kerf along the cut at each face.
    dwell_s : float
        Total dwell time of the program, s.
    overshoot_mm : float
        Exit overshoot beyond the block, mm.
    gcode : str or None
        Path of the program relative to the report's folder.
    dxf : str or None
        Path of the piece's DXF relative to the report's folder.
    """

    id: str
    region_plan: np.ndarray
    sample_plan_xy: np.ndarray
    sample_deviation: np.ndarray
    left_profile: np.ndarray
    right_profile: np.ndarray
    towers: np.ndarray
    kerf_left_mm: tuple[float, float]
    kerf_right_mm: tuple[float, float]
    dwell_s: float
    overshoot_mm: float
    gcode: str | None = None
    dxf: str | None = None


@dataclass(frozen=True)
class ReportData:
    """Everything the report shows.

    Attributes
    ----------
    plan_json : dict
        The plan.json document (docs/interface: ``summary``, ``pieces``, ``findings``, ...).
    target_vertices : (n, 3) float, mm, part frame
        The target mesh.
    target_faces : (m, 3) int
        Its triangles.
    target_deviation : (n,) float, mm
        Signed deviation per vertex; NaN where no piece covers it.
    pieces : tuple of PieceSheet
        One per entry of ``plan_json["pieces"]``, same ids.
    title : str
        Heading of the page (e.g. the mesh file name).
    safety : tuple of str
        Safety cautions shown in the summary.
    viewer_max_faces : int
        The 3D view shows at most this many triangles (a coarser copy by vertex clustering
        beyond it, :mod:`wirecut.export.view_mesh`).
    """

    plan_json: dict
    target_vertices: np.ndarray
    target_faces: np.ndarray
    target_deviation: np.ndarray
    pieces: tuple[PieceSheet, ...]
    title: str = "wirecut plan"
    safety: tuple[str, ...] = SAFETY_CAUTIONS
    viewer_max_faces: int = 20000

    @property
    def tolerance_mm(self) -> float:
        """The job's surface tolerance, mm (from plan.json)."""
        return float(self.plan_json["tolerance_mm"])


# --------------------------------------------------------------------------- formatting

_E = html.escape


def _num(value, digits: int) -> str:
    """A plan.json number as shown: fixed decimals, '-' for None/NaN."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    return f"{float(value):.{digits}f}"


def _cell(value, digits: int, key: str, unit: str = "") -> str:
    """A number with its plan.json key (``data-key``) and unit; ``%`` shows a fraction x 100."""
    u = f" <span class='unit'>{_E(unit)}</span>" if unit else ""
    scale = ""
    if unit == "%" and value is not None:
        value, scale = 100.0 * float(value), " data-scale='100'"
    return f"<span class='num' data-key='{_E(key)}'{scale}>{_num(value, digits)}</span>{u}"


def _programmed_note(pieces: list) -> str:
    """Where some pieces have no program, how many have one (the total counts only those)."""
    written = sum(1 for p in pieces if p.get("gcode"))
    if written == len(pieces):
        return ""
    return f"; {written} of {len(pieces)} pieces have a program (see the findings)"


def _hms(seconds) -> str:
    if seconds is None:
        return ""
    s = int(round(float(seconds)))
    return f" ({s // 3600} h {s % 3600 // 60:02d} min)"


# --------------------------------------------------------------------------- pictures


_PLAN_VIEW_SHEETS = 12  # the plan view costs about as much as this many piece pictures
_MEANWHILE_SHEETS = 6  # what the caller does meanwhile, in piece pictures


def _picture_runs(n: int, processes: int) -> list[list[int]]:
    """Piece indices for each of ``processes`` runs (the first is the caller's, the last also
    draws the plan view), balanced by cost; never more runs than there is work for."""
    k = max(1, min(processes, n + 1))
    if k == 1:
        return [list(range(n))]
    # cost units: run 0 has the caller's other work, run k-1 the plan view
    extra = np.zeros(k)
    extra[0] += _MEANWHILE_SHEETS
    extra[-1] += _PLAN_VIEW_SHEETS
    level = (n + extra.sum()) / k
    counts = np.maximum(np.floor(level - extra), 0).astype(int)
    while counts.sum() > n:  # too few pieces to level: take from the busiest run
        counts[np.argmax(np.where(counts > 0, counts + extra, -np.inf))] -= 1
    counts[np.argmin(extra)] += n - int(counts.sum())  # what rounding left, to the cheapest
    edges = np.r_[0, np.cumsum(counts)]
    return [list(range(int(a), int(b))) for a, b in zip(edges[:-1], edges[1:], strict=True)]


def _save(picture, path: Path) -> None:
    try:
        picture.save(path)
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc}") from None


def _plan_view_png(data: ReportData, path: Path) -> None:
    from wirecut.export.rational import write_deviation_map

    if data.pieces:
        xy = np.vstack([p.sample_plan_xy for p in data.pieces])
        dev = np.concatenate([p.sample_deviation for p in data.pieces])
    else:
        from wirecut.geometry.frames import to_plan

        xy, dev = to_plan(data.target_vertices, np.array([0.0, 0.0, 1.0])), data.target_deviation
    write_deviation_map(
        xy,
        dev,
        data.tolerance_mm,
        path,
        [p.region_plan for p in data.pieces],
        [p.id for p in data.pieces],
        title="Pieces over the deviation of the planned cut",
    )


def _svg_paths(title: str, curves: list[tuple[np.ndarray, str, str]], box_xy=None) -> str:
    """Inline SVG of polylines (k, 2) mm with equal axis scale; y up. ``box_xy``: a rectangle."""
    pts = [np.asarray(c, float).reshape(-1, 2) for c, _, _ in curves if len(c)]
    if box_xy is not None:
        (bx0, bx1), (by0, by1) = box_xy
        pts.append(np.array([[bx0, by0], [bx1, by1]], float))
    if not pts:
        return ""
    allp = np.vstack(pts)
    lo, hi = allp.min(axis=0), allp.max(axis=0)
    span = np.maximum(hi - lo, 1e-9)
    w, h, pad = 300.0, 220.0, 18.0
    s = min((w - 2 * pad) / span[0], (h - 2 * pad) / span[1])

    def tx(p: np.ndarray) -> str:
        x = pad + (p[:, 0] - lo[0]) * s
        y = h - pad - (p[:, 1] - lo[1]) * s
        return " ".join(f"{a:.1f},{b:.1f}" for a, b in zip(x, y, strict=True))

    parts = [
        f"<svg class='drawing' viewBox='0 0 {w:g} {h:g}' role='img' aria-label='{_E(title)}'>",
        f"<title>{_E(title)}</title>",
    ]
    if box_xy is not None:
        (bx0, bx1), (by0, by1) = box_xy
        corners = np.array([[bx0, by0], [bx1, by0], [bx1, by1], [bx0, by1]])
        parts.append(f"<polygon class='blank' points='{tx(corners)}'/>")
    for c, cls, _ in curves:
        c = np.asarray(c, float).reshape(-1, 2)
        if len(c) > 1:
            parts.append(f"<polyline class='{cls}' points='{tx(c)}'/>")
    legend = " ".join(f"<tspan class='{cls}-t'>{_E(label)}</tspan>" for _, cls, label in curves)
    parts.append(f"<text x='{pad:g}' y='12' class='legend'>{legend}</text>")
    bar = 10 ** math.floor(math.log10(max(span.max() / 4.0, 1e-9)))
    parts.append(
        f"<line class='scale' x1='{w - pad - bar * s:.1f}' y1='{h - 6:g}' "
        f"x2='{w - pad:.1f}' y2='{h - 6:g}'/>"
        f"<text x='{w - pad:.1f}' y='{h - 9:g}' class='legend' text-anchor='end'>{bar:g} mm</text>"
    )
    parts.append("</svg>")
    return "".join(parts)


# --------------------------------------------------------------------------- 3D view data


def _viewer_json(data: ReportData) -> str:
    from wirecut.export.view_mesh import coarsened

    v, f, dev = coarsened(
        data.target_vertices, data.target_faces, data.target_deviation, data.viewer_max_faces
    )
    face_dev = dev[f].mean(axis=1) if len(f) else np.zeros(0)
    colours = [
        f"#{r:02x}{g:02x}{b:02x}" for r, g, b, _ in deviation_colors(face_dev, data.tolerance_mm)
    ]
    doc = {
        "v": [round(x, 1) for x in v.ravel().tolist()],
        "f": f.ravel().tolist(),
        "c": colours,
    }
    # "</" cannot end the script element early: JSON may escape the slash
    return json.dumps(doc, separators=(",", ":")).replace("</", "<\\/")


# --------------------------------------------------------------------------- page parts

_CSS = """
:root { --ink:#1d2327; --muted:#5b6770; --rule:#d5d9dc; --band:#f3f5f6; --accent:#2b6a8f; }
* { box-sizing: border-box; }
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: var(--ink);
       margin: 0 auto; max-width: 1100px; padding: 1.2rem 1.5rem 3rem; }
h1 { font-size: 1.6rem; margin: 0 0 .2rem; } h2 { font-size: 1.25rem; margin: 2rem 0 .6rem;
  border-bottom: 2px solid var(--accent); padding-bottom: .2rem; } h3 { font-size: 1.05rem; }
.sub { color: var(--muted); margin: 0 0 1rem; }
table { border-collapse: collapse; margin: .4rem 0 1rem; }
th, td { text-align: left; padding: .25rem .7rem .25rem 0; border-bottom: 1px solid var(--rule);
         vertical-align: top; }
th { font-weight: 600; color: var(--muted); }
.num { font-variant-numeric: tabular-nums; font-weight: 600; } .unit { color: var(--muted); }
.grid { display: grid; grid-template-columns: repeat(auto-fit, minmax(300px, 1fr)); gap: 1rem; }
.cautions { background: #fff7e6; border-left: 4px solid #d08a00; padding: .5rem 1rem; }
.cautions li { margin: .2rem 0; }
img.plot { max-width: 100%; height: auto; border: 1px solid var(--rule); }
canvas.viewer { width: 100%; max-width: 900px; height: auto; border: 1px solid var(--rule);
                cursor: grab; background: #f4f2ee; }
.sheet { border-top: 1px solid var(--rule); margin-top: 2rem; }
svg.drawing { width: 100%; max-width: 340px; border: 1px solid var(--rule); background: #fff; }
svg polyline { fill: none; stroke-width: 1.6; } svg .blank { fill: #eef2f4; stroke: #9aa5ad; }
svg .left { stroke: #2b6a8f; } svg .right { stroke: #c0572b; stroke-dasharray: 5 3; }
svg .left-t { fill: #2b6a8f; } svg .right-t { fill: #c0572b; }
svg .legend { font-size: 11px; fill: var(--muted); } svg .scale { stroke: #000; stroke-width: 2; }
.code { font-family: ui-monospace, monospace; }
table.findings tr.attention td:nth-child(2) { font-weight: 600; }
.missing { color: var(--muted); font-style: italic; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  .viewer-block { display: none; }
  .sheet { break-before: page; }
  a { color: inherit; text-decoration: none; }
  h2 { break-after: avoid; }
}
"""


_CSP = (
    "default-src 'none'; img-src 'self' data: file:; style-src 'unsafe-inline'; "
    "script-src 'unsafe-inline'"
)
"""The page may load nothing but its own pictures: no remote script, font or image."""


def _value(value, digits: int, unit: str, attr: str) -> str:
    """A number of the ReportData (not plan.json) with a marking attribute and its unit."""
    u = f" <span class='unit'>{_E(unit)}</span>" if unit else ""
    return f"<span class='num' {attr}>{_num(value, digits)}</span>{u}"


def _summary(pj: dict) -> str:
    s = pj.get("summary", {})
    rows = [
        (
            "Area within tolerance, no undercut",
            _cell((s.get("feasible_area_fraction")), 1, "summary.feasible_area_fraction", "%"),
        ),
        (
            "Largest deviation of the planned cut",
            _cell(s.get("max_deviation_mm"), 3, "summary.max_deviation_mm", "mm"),
        ),
        ("Surface tolerance", _cell(pj.get("tolerance_mm"), 3, "tolerance_mm", "mm")),
        ("Pieces", _cell(s.get("pieces"), 0, "summary.pieces")),
        ("Stock blocks used", _cell(s.get("blocks_used"), 0, "summary.blocks_used")),
        (
            "Foam cut from the stock",
            _cell(s.get("foam_volume_m3"), 3, "summary.foam_volume_m3", "m³"),
        ),
        (
            "Foam kept in the mold",
            _cell(s.get("kept_volume_m3"), 3, "summary.kept_volume_m3", "m³"),
        ),
        ("Waste", _cell((s.get("waste_fraction")), 1, "summary.waste_fraction", "%")),
        (
            "Machine time, all programs",
            _cell(s.get("machine_time_s"), 0, "summary.machine_time_s", "s")
            + _E(_hms(s.get("machine_time_s")))
            + _E(_programmed_note(pj.get("pieces", []))),
        ),
    ]
    body = "".join(f"<tr><th>{_E(k)}</th><td>{v}</td></tr>" for k, v in rows)
    return f"<table class='summary'>{body}</table>"


def _findings(pj: dict) -> str:
    fs = pj.get("findings", [])
    if not fs:
        return "<p>No findings.</p>"
    rows = "".join(
        f"<tr class='{_E(_severity(f))}'><td class='code'>{_E(str(f.get('code', '')))}</td>"
        f"<td>{_E(_severity(f))}</td>"
        f"<td>{_E(str(f.get('piece') or 'all'))}</td>"
        f"<td>{_E(str(f.get('message', '')))}</td></tr>"
        for f in fs
    )
    head = "<tr><th>code</th><th>severity</th><th>piece</th><th>what to read</th></tr>"
    return f"<table class='findings'>{head}{rows}</table>"


def _severity(finding: dict) -> str:
    """``attention`` (read it: the CLI exits with 1) or ``info``; a plan.json written before
    findings carried a severity says neither."""
    value = str(finding.get("severity", ""))
    return value if value in ("info", "attention") else "unknown"


def _link(out_dir: Path, rel: str | None, label: str) -> str:
    """A link to a written file, or a note when the file is not there (never a dead link)."""
    if rel and (out_dir / rel).is_file():
        return f"<a href='{_E(rel)}'>{_E(label)}</a>"
    return f"<span class='missing'>{_E(label)} not written</span>"


def _sheet(out_dir: Path, sheet: PieceSheet, entry: dict, i: int, pj: dict, img: str) -> str:
    key = f"pieces.{i}."
    span = pj.get("machine", {}).get("span_mm")
    faces = entry.get("faces_z_mm") or [None, None]
    block = entry.get("block_machine_mm", {})
    bx, by = block.get("x") or [None, None], block.get("y") or [None, None]
    size = entry.get("blank_size_mm") or [None, None, None]
    right_gap = None if span is None or faces[1] is None else float(span) - float(faces[1])
    wire = entry.get("wire_direction_part") or []
    rows = [
        (
            "Stock",
            f"<span class='code'>{_E(str(entry['stock']))}</span>"
            if entry.get("stock")
            else "no block on hand takes this blank (see the findings)",
        ),
        (
            "Blank (sweep x wire x height)",
            " × ".join(_cell(v, 0, f"{key}blank_size_mm.{j}") for j, v in enumerate(size))
            + " <span class='unit'>mm</span>",
        ),
        ("Left face from the left tower plane", _cell(faces[0], 1, f"{key}faces_z_mm.0", "mm")),
        (
            "Right face from the right tower plane",
            _value(right_gap, 1, "mm", "data-derived='machine.span_mm-faces_z_mm.1'"),
        ),
        (
            "Blank corner from home (x, y)",
            _cell(bx[0], 1, f"{key}block_machine_mm.x.0", "mm")
            + ", "
            + _cell(by[0], 1, f"{key}block_machine_mm.y.0", "mm"),
        ),
        *(
            [
                (
                    "Riser under the blank (foam only: the wire cuts into it)",
                    _cell(entry["riser_mm"], 0, f"{key}riser_mm", "mm"),
                )
            ]
            if entry.get("riser_mm")
            else []
        ),
        (
            "Wire direction (part frame)",
            "("
            + ", ".join(_cell(v, 4, f"{key}wire_direction_part.{j}") for j, v in enumerate(wire))
            + ")",
        ),
        (
            "Kerf at the left face",
            _value(sheet.kerf_left_mm[0], 2, "", "data-sheet='kerf_left_mm.0'")
            + " – "
            + _value(sheet.kerf_left_mm[1], 2, "mm", "data-sheet='kerf_left_mm.1'"),
        ),
        (
            "Kerf at the right face",
            _value(sheet.kerf_right_mm[0], 2, "", "data-sheet='kerf_right_mm.0'")
            + " – "
            + _value(sheet.kerf_right_mm[1], 2, "mm", "data-sheet='kerf_right_mm.1'"),
        ),
        (
            "Dwell, total",
            _value(sheet.dwell_s, 1, "s", "data-sheet='dwell_s'"),
        ),
        (
            "Exit overshoot",
            _value(sheet.overshoot_mm, 1, "mm", "data-sheet='overshoot_mm'"),
        ),
        (
            "Machine time",
            _cell(entry.get("machine_time_s"), 0, f"{key}machine_time_s", "s")
            + _E(_hms(entry.get("machine_time_s"))),
        ),
        (
            "Largest deviation",
            _cell(entry.get("max_deviation_mm"), 3, f"{key}max_deviation_mm", "mm"),
        ),
        ("RMS deviation", _cell(entry.get("rms_deviation_mm"), 3, f"{key}rms_deviation_mm", "mm")),
        (
            "Area within tolerance",
            _cell((entry.get("feasible_area_fraction")), 1, f"{key}feasible_area_fraction", "%"),
        ),
        (
            "Gouged area",
            _cell((entry.get("gouge_area_fraction")), 1, f"{key}gouge_area_fraction", "%"),
        ),
        ("Files", _link(out_dir, sheet.gcode, "G-code") + " · " + _link(out_dir, sheet.dxf, "DXF")),
    ]
    table = "".join(f"<tr><th>{_E(k)}</th><td>{v}</td></tr>" for k, v in rows)
    box = None
    if bx[0] is not None and by[0] is not None:
        box = ((float(bx[0]), float(bx[1])), (float(by[0]), float(by[1])))
    t = np.asarray(sheet.towers, float).reshape(-1, 4)
    faces_svg = _svg_paths(
        f"{sheet.id} face profiles",
        [(sheet.left_profile, "left", "left face"), (sheet.right_profile, "right", "right face")],
        box,
    )
    towers_svg = _svg_paths(
        f"{sheet.id} tower paths",
        [(t[:, :2], "left", "left tower X, Y"), (t[:, 2:], "right", "right tower U, V")],
    )
    return (
        f"<section class='sheet' id='piece-{_E(sheet.id)}' data-piece='{_E(sheet.id)}'>"
        f"<h2>Setup sheet {_E(sheet.id)}</h2>"
        f"<div class='grid'><div><table>{table}</table></div>"
        f"<div><img class='plot' src='{_E(img)}' alt='deviation map of {_E(sheet.id)}'></div></div>"
        f"<div class='grid'><figure>{faces_svg}<figcaption>Face profiles in the blank "
        f"(machine x, y, mm)</figcaption></figure><figure>{towers_svg}<figcaption>Tower paths "
        f"(machine X, Y and U, V, mm)</figcaption></figure></div></section>"
    )


def _page(data: ReportData, out_dir: Path, plan_img: str, piece_imgs: dict[str, str]) -> str:
    pj = data.plan_json
    entries = {str(e.get("id")): (i, e) for i, e in enumerate(pj.get("pieces", []))}
    viewer_js = resources.files("wirecut.data").joinpath("report_viewer.js").read_text("utf-8")
    sheets = []
    for sheet in data.pieces:
        i, entry = entries.get(sheet.id, (None, {}))
        if i is None:
            raise OutputError(f"report: piece {sheet.id!r} is not in plan.json's pieces")
        sheets.append(_sheet(out_dir, sheet, entry, i, pj, piece_imgs[sheet.id]))
    toc = " · ".join(f"<a href='#piece-{_E(p.id)}'>{_E(p.id)}</a>" for p in data.pieces)
    cautions = "".join(f"<li>{_E(c)}</li>" for c in data.safety)
    tol = data.tolerance_mm
    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<meta http-equiv='Content-Security-Policy' content=\"{_CSP}\">"
        f"<title>{_E(data.title)}</title><style>{_CSS}</style></head><body>"
        f"<h1>{_E(data.title)}</h1><p class='sub'>Hot-wire cutting plan · units mm · "
        f"tolerance {_E(_num(tol, 3))} mm · {len(data.pieces)} piece(s)</p>"
        "<h2 id='summary'>Summary</h2>"
        + _summary(pj)
        + "<h2 id='findings'>Findings</h2>"
        + _findings(pj)
        + f"<h2 id='safety'>Safety</h2><ul class='cautions'>{cautions}</ul>"
        + "<h2 id='plan-view'>Plan view</h2>"
        f"<img class='plot' src='{_E(plan_img)}' alt='plan view: pieces over the deviation'>"
        "<p>Red: foam left on the part (the cut stands proud); blue: gouge into the part. The "
        f"colour scale ends at the tolerance, ±{_E(_num(tol, 3))} mm: full colour means at or "
        "beyond it. Each cell shows the worst sample inside it.</p>"
        "<div class='viewer-block'><h2 id='view-3d'>3D view</h2>"
        "<p>Drag to turn, wheel to zoom, double-click to reset. Same colours as the plan "
        "view; grey where no piece covers the target.</p>"
        "<canvas class='viewer' id='viewer' width='900' height='560' "
        "data-mesh='mesh-data'></canvas>"
        f"<script type='application/json' id='mesh-data'>{_viewer_json(data)}</script>"
        f"<script>{viewer_js}</script></div>"
        + (f"<h2 id='pieces'>Pieces</h2><p>{toc}</p>" if data.pieces else "")
        + "".join(sheets)
        + "</body></html>\n"
    )


def write_report(
    data: ReportData, out_dir: Path, meanwhile: Callable[[], None] | None = None
) -> Path:
    """Write ``out_dir/report.html`` and its pictures in ``out_dir/report_files/``.

    Links to G-code and DXF files are written only for files that exist in ``out_dir`` when the
    report's page is written (after ``meanwhile``); a missing one shows as "not written".

    Parameters
    ----------
    data : ReportData
    out_dir : Path
    meanwhile : callable, optional
        Called here while worker processes draw the pictures (the planner writes its DXF and
        meshes then); the page is written after it returns.

    Returns
    -------
    Path
        The report's path.

    Raises
    ------
    OutputError
        A file cannot be written, or a piece sheet names a piece plan.json does not have.
    """
    out_dir = Path(out_dir)
    files = out_dir / "report_files"
    try:
        files.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"cannot create {files}: {exc}") from None
    piece_imgs = {sheet.id: f"report_files/deviation_{sheet.id}.png" for sheet in data.pieces}

    def draw(sheets, plan_view: bool) -> None:
        if plan_view:
            _plan_view_png(data, files / "plan_view.png")
        if not sheets:
            return
        picture = DeviationPicture(
            data.tolerance_mm, (5.0, 3.6), (0.16, 0.9, 0.15, 0.9), "deviation (mm)", cells=200
        )
        for sheet in sheets:
            picture.show(sheet.sample_plan_xy, sheet.sample_deviation, [sheet.region_plan],
                         [""], f"{sheet.id}: deviation")  # fmt: skip
            _save(picture, out_dir / piece_imgs[sheet.id])

    # the pictures in runs, one per process: this one (which also has ``meanwhile`` to do)
    # and the workers; the plan view, worth about _PLAN_VIEW_SHEETS piece pictures, in the last
    runs = _picture_runs(len(data.pieces), worker_count())
    later = [
        background(lambda r=r, last=i == len(runs) - 1: draw([data.pieces[j] for j in r], last))
        for i, r in enumerate(runs[1:], start=1)
    ]
    try:
        if meanwhile is not None:
            meanwhile()
        draw([data.pieces[j] for j in runs[0]], len(runs) == 1)
    except BaseException:
        for job in later:  # let the workers finish before the caller discards the folder
            job.wait()
        raise
    for job in later:
        job.result()
    text = _page(data, out_dir, "report_files/plan_view.png", piece_imgs)
    path = out_dir / "report.html"
    try:
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc}") from None
    return path
