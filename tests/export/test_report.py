"""The HTML report: written from a hand-built ReportData, checked as text and in headless Chromium.

The browser checks need Debian's ``chromium`` package and the ``websocket-client`` pip package
(Chromium's DevTools protocol over a local websocket); without them they skip with a reason.
"""

from __future__ import annotations

import base64
import io
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest

from wirecut.errors import OutputError
from wirecut.export.report import PieceSheet, ReportData, write_report

# --------------------------------------------------------------------------- a synthetic plan

TOL = 0.5


def _surface():
    # hyperbolic paraboloid z = x y / 2000 over 1600 x 900 mm (a shape known by construction)
    x, y = np.meshgrid(np.linspace(0, 1600, 33), np.linspace(0, 900, 19), indexing="ij")
    v = np.column_stack([x.ravel(), y.ravel(), (x * y / 2000.0).ravel()])
    ny = 19
    i, j = np.meshgrid(np.arange(32), np.arange(18), indexing="ij")
    a, b, c, d = i * ny + j, (i + 1) * ny + j, (i + 1) * ny + j + 1, i * ny + j + 1
    f = np.concatenate([np.column_stack([a.ravel(), b.ravel(), c.ravel()]),
                        np.column_stack([a.ravel(), c.ravel(), d.ravel()])])  # fmt: skip
    return v, f


def _sheet(pid: str, x0: float, x1: float, gcode: str | None) -> PieceSheet:
    rng = np.random.default_rng(int(pid[1:]))
    xy = np.column_stack([rng.uniform(x0, x1, 400), rng.uniform(0, 900, 400)])
    dev = 0.4 * np.sin(xy[:, 0] / 200.0)  # within the 0.5 mm tolerance by construction
    prof = np.column_stack([np.linspace(30, 830, 20), 300 + 40 * np.sin(np.linspace(0, 3, 20))])
    towers = np.column_stack([prof, prof + [5.0, 12.0]])
    return PieceSheet(
        id=pid,
        region_plan=np.array([[x0, 0.0], [x1, 0.0], [x1, 900.0], [x0, 900.0]]),
        sample_plan_xy=xy,
        sample_deviation=dev,
        left_profile=prof,
        right_profile=prof + [0.0, 8.0],
        towers=towers,
        kerf_left_mm=(1.10, 1.25),
        kerf_right_mm=(1.12, 1.31),
        dwell_s=6.0,
        overshoot_mm=12.5,
        gcode=gcode,
        dxf="pieces.dxf",
    )


def _plan_json() -> dict:
    def piece(pid, z0, t):
        return {
            "id": pid, "gcode": f"gcode/{pid}.ngc", "dxf": "pieces.dxf",
            "region_part_xy_mm": [[0, 0], [800, 0], [800, 900], [0, 900]],
            "wire_direction_part": [0.0, 1.0, 0.0],
            "part_to_machine": [[1, 0, 0, 0], [0, 1, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1]],
            "faces_z_mm": [z0, z0 + 900.0],
            "block_machine_mm": {"x": [20.0, 860.0], "y": [0.0, 520.0], "z": [z0, z0 + 900.0]},
            "blank_size_mm": [840.0, 900.0, 520.0], "stock": "long",
            "max_deviation_mm": 0.4, "rms_deviation_mm": 0.2828, "p95_deviation_mm": 0.39,
            "gouge_area_fraction": 0.0, "excess_area_fraction": 0.0,
            "undercut_area_fraction": 0.0, "feasible_area_fraction": 1.0, "machine_time_s": t,
        }  # fmt: skip

    return {
        "units": "mm",
        "tolerance_mm": TOL,
        "machine": {"span_mm": 1600.0, "travel_x_mm": [0.0, 1200.0], "travel_y_mm": [0.0, 800.0]},
        "summary": {
            "feasible_area_fraction": 0.9731,
            "max_deviation_mm": 0.4,
            "pieces": 2,
            "blocks_used": 1,
            "foam_volume_m3": 0.7862,
            "kept_volume_m3": 0.5123,
            "waste_fraction": 0.3484,
            "machine_time_s": 1234.5,
        },  # fmt: skip
        "pieces": [piece("P01", 350.0, 600.25), piece("P02", 300.0, 634.25)],
        "findings": [
            {"code": "out-of-tolerance", "piece": "P02", "message": "2.7% of <b>P02</b> & more"},
            {"code": "direction-choice", "piece": None, "message": "wire at 90 deg"},
        ],
    }


def _data() -> ReportData:
    v, f = _surface()
    dev = 0.4 * np.sin(v[:, 0] / 200.0)
    dev[v[:, 1] > 850] = np.nan  # a strip no piece covers
    pieces = (
        _sheet("P01", 0.0, 800.0, "gcode/P01.ngc"),
        _sheet("P02", 800.0, 1600.0, "gcode/P02.ngc"),
    )
    return ReportData(_plan_json(), v, f, dev, pieces, title="Test plan <canopy> & co")


def _write(tmp_path: Path) -> Path:
    # the G-code and DXF files exist before the report, as the plan writer makes them
    (tmp_path / "gcode").mkdir()
    for pid in ("P01", "P02"):
        (tmp_path / "gcode" / f"{pid}.ngc").write_text("G21\nM2\n", encoding="ascii")
    (tmp_path / "pieces.dxf").write_text("0\nEOF\n", encoding="ascii")
    return write_report(_data(), tmp_path)


class _Page(HTMLParser):
    """Collects links, ids, piece sections and marked numbers of the page."""

    def __init__(self):
        super().__init__()
        self.links, self.ids, self.pieces, self.numbers = [], set(), [], []
        self._open = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for k in ("href", "src"):
            if k in a:
                self.links.append(a[k])
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "section" and "data-piece" in a:
            self.pieces.append(a["data-piece"])
        if "data-key" in a or "data-sheet" in a:
            self._open = [a, ""]

    def handle_data(self, data):
        if self._open is not None:
            self._open[1] += data

    def handle_endtag(self, tag):
        if self._open is not None and tag == "span":
            self.numbers.append(tuple(self._open))
            self._open = None


def _parse(path: Path) -> _Page:
    p = _Page()
    p.feed(path.read_text("utf-8"))
    return p


def _lookup(doc, key: str):
    for part in key.split("."):
        doc = doc[int(part)] if isinstance(doc, list) else doc[part]
    return doc


# --------------------------------------------------------------------------- text checks


def test_every_link_resolves_to_a_written_file(tmp_path):
    page = _parse(_write(tmp_path))
    assert page.links
    for link in page.links:
        if link.startswith("#"):
            assert link[1:] in page.ids
        else:
            assert not re.match(r"^[a-z]+:", link), link  # relative, never a remote address
            assert (tmp_path / link).is_file(), link


def test_every_piece_has_its_sheet(tmp_path):
    page = _parse(_write(tmp_path))
    assert page.pieces == ["P01", "P02"]
    assert {"piece-P01", "piece-P02"} <= page.ids


def test_numbers_shown_equal_plan_json(tmp_path):
    data = _data()
    page = _parse(_write(tmp_path))
    keys = [a["data-key"] for a, _ in page.numbers if "data-key" in a]
    for needed in ("summary.max_deviation_mm", "summary.machine_time_s", "summary.pieces",
                   "summary.foam_volume_m3", "summary.waste_fraction", "pieces.1.machine_time_s",
                   "pieces.0.faces_z_mm.0", "pieces.0.blank_size_mm.2"):  # fmt: skip
        assert needed in keys
    for attrs, text in page.numbers:
        shown = float(text)
        decimals = len(text.split(".")[1]) if "." in text else 0
        if "data-key" in attrs:
            value = float(_lookup(data.plan_json, attrs["data-key"]))
            value *= float(attrs.get("data-scale", 1))
        else:  # a ReportData field; both synthetic sheets share kerf, dwell, overshoot
            name, *idx = attrs["data-sheet"].split(".")
            v = getattr(data.pieces[0], name)
            value = float(v[int(idx[0])]) if idx else float(v)
        # rounding to the shown decimals (round half to even allowed)
        assert abs(shown - value) <= 0.5 * 10**-decimals + 1e-12, (attrs, text, value)


def test_user_text_is_escaped(tmp_path):
    text = _write(tmp_path).read_text("utf-8")
    assert "<b>P02</b>" not in text and "&lt;b&gt;P02&lt;/b&gt; &amp; more" in text
    assert "<canopy>" not in text and "Test plan &lt;canopy&gt; &amp; co" in text


def test_output_is_deterministic(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir()
    b.mkdir()
    _write(a)
    _write(b)
    for f in sorted(p.relative_to(a) for p in a.rglob("*") if p.is_file()):
        assert (a / f).read_bytes() == (b / f).read_bytes(), f


def test_missing_program_is_not_linked(tmp_path):
    data = _data()
    sheets = (data.pieces[0], _sheet("P02", 800.0, 1600.0, "gcode/P02.ngc"))
    from dataclasses import replace

    path = write_report(replace(data, pieces=sheets), tmp_path)  # no gcode files written
    page = _parse(path)
    assert not any(link.endswith(".ngc") for link in page.links)
    assert "G-code not written" in path.read_text("utf-8")


def test_unknown_piece_is_refused(tmp_path):
    from dataclasses import replace

    data = _data()
    bad = replace(data, pieces=(_sheet("P09", 0.0, 100.0, None),))
    with pytest.raises(OutputError, match="P09"):
        write_report(bad, tmp_path)


def test_pictures_are_png(tmp_path):
    _write(tmp_path)
    pngs = sorted((tmp_path / "report_files").glob("*.png"))
    assert [p.name for p in pngs] == ["deviation_P01.png", "deviation_P02.png", "plan_view.png"]
    for p in pngs:
        assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification)


# --------------------------------------------------------------------------- headless Chromium

from browser import CHROMIUM, DevTools, open_page  # noqa: E402 - shared with the demo test


@pytest.fixture(scope="module")
def loaded(tmp_path_factory):
    if CHROMIUM is None:
        print("skip: chromium is not installed (Debian package 'chromium')")
        pytest.skip("chromium is not installed (Debian package 'chromium')")
    try:
        import websocket  # noqa: F401
    except ImportError:
        print("skip: the websocket-client pip package is not installed")
        pytest.skip("the websocket-client pip package is not installed")
    out = tmp_path_factory.mktemp("report")
    path = _write(out)
    browser = DevTools(tmp_path_factory.mktemp("chromium-profile"))
    try:
        open_page(browser, path)  # images decoded, the viewer drawn, before the page is judged
        yield browser, out
    finally:
        browser.close()


def test_loads_without_console_errors(loaded):
    browser, _ = loaded
    browser.eval("1")  # drain pending events
    errors = [e for e in browser.events if e.get("method") == "Runtime.exceptionThrown"]
    errors += [e for e in browser.events if e.get("method") == "Runtime.consoleAPICalled"
               and e["params"]["type"] in ("error", "warning", "assert")]  # fmt: skip
    errors += [e for e in browser.events if e.get("method") == "Log.entryAdded"
               and e["params"]["entry"]["level"] in ("error", "warning")]  # fmt: skip
    assert errors == []


def test_makes_no_network_request(loaded):
    browser, _ = loaded
    urls = [e["params"]["request"]["url"] for e in browser.events
            if e.get("method") == "Network.requestWillBeSent"]  # fmt: skip
    assert urls  # the page and its pictures are requests too
    assert all(u.startswith(("file://", "data:")) for u in urls), urls
    failed = [e for e in browser.events if e.get("method") == "Network.loadingFailed"]
    assert failed == []


def test_images_load_and_viewer_draws(loaded):
    browser, _ = loaded
    sizes = browser.eval("[...document.images].map(i => [i.naturalWidth, i.naturalHeight])")
    assert len(sizes) == 3 and all(w > 100 and h > 100 for w, h in sizes)
    assert int(browser.eval("document.getElementById('viewer').dataset.drawn")) >= 1
    assert browser.eval("document.querySelectorAll('section.sheet svg.drawing').length") == 4


def test_viewer_turns_with_the_mouse(loaded):
    browser, _ = loaded
    before = browser.eval("document.getElementById('viewer').dataset.yaw")
    box = browser.eval(
        "(() => { const c = document.getElementById('viewer'); c.scrollIntoView();"
        " const r = c.getBoundingClientRect(); return [r.x + r.width / 2, r.y + r.height / 2]; })()"
    )
    x, y = box
    browser.call(
        "Input.dispatchMouseEvent", type="mousePressed", x=x, y=y, button="left", clickCount=1
    )  # noqa: E501
    browser.call("Input.dispatchMouseEvent", type="mouseMoved", x=x + 120, y=y + 30, button="left")
    browser.call(
        "Input.dispatchMouseEvent", type="mouseReleased", x=x + 120, y=y + 30, button="left"
    )  # noqa: E501
    browser.eval("new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)))")
    after = browser.eval("document.getElementById('viewer').dataset.yaw")
    # 120 px of drag at 0.01 rad/px turns the view by 1.2 rad (the viewer's own scale)
    assert float(after) - float(before) == pytest.approx(1.2, abs=1e-3)


def test_screenshot_is_not_blank(loaded):
    from PIL import Image

    browser, _ = loaded
    browser.eval("window.scrollTo(0, 0)")
    shot = browser.call("Page.captureScreenshot", format="png")["data"]
    img = np.asarray(Image.open(io.BytesIO(base64.b64decode(shot))).convert("RGB"))
    colours = np.unique(img.reshape(-1, 3), axis=0)
    assert img.shape[0] > 500 and img.shape[1] > 800
    assert len(colours) > 200  # text, tables and anti-aliasing: many distinct pixel values


def test_colour_caption_says_what_the_palette_does(tmp_path):
    # the caption's words and range are those of the one deviation scale (export.palette):
    # red for + (foam left), blue for - (gouge), ends at +-tol
    from wirecut.export.palette import deviation_colors

    text = _write(tmp_path).read_text("utf-8")
    tol = _data().tolerance_mm
    assert "Red: foam left on the part" in text and "blue: gouge into the part" in text
    assert f"±{tol:.3f} mm" in text
    plus, minus = deviation_colors(np.array([tol, -tol]), tol)
    assert plus[0] > plus[2] and minus[2] > minus[0]  # + red, - blue


def test_pictures_are_the_same_drawn_here_or_in_workers(tmp_path, monkeypatch):
    out = {}
    for workers in ("1", "3"):
        monkeypatch.setenv("WIRECUT_WORKERS", workers)
        d = tmp_path / workers
        d.mkdir()
        _write(d)
        out[workers] = {p.name: p.read_bytes() for p in (d / "report_files").glob("*.png")}
    assert out["1"] == out["3"] and len(out["1"]) == 3


def test_files_written_meanwhile_are_linked(tmp_path):
    from dataclasses import replace

    data = _data()
    sheets = (data.pieces[0], _sheet("P02", 800.0, 1600.0, "gcode/P02.ngc"))

    def program() -> None:  # written while the pictures are drawn, before the page
        (tmp_path / "gcode").mkdir(exist_ok=True)
        (tmp_path / "gcode" / "P02.ngc").write_text("%\n%\n", encoding="ascii")

    path = write_report(replace(data, pieces=sheets), tmp_path, meanwhile=program)
    assert "gcode/P02.ngc" in _parse(path).links


@pytest.mark.parametrize("n", [0, 1, 2, 5, 42])
@pytest.mark.parametrize("processes", [1, 2, 3, 8])
def test_picture_runs_draw_every_piece_once(n, processes):
    from wirecut.export.report import _picture_runs

    runs = _picture_runs(n, processes)
    assert 1 <= len(runs) <= processes
    assert sorted(j for r in runs for j in r) == list(range(n))


def test_an_error_meanwhile_is_raised_after_the_workers_end(tmp_path, monkeypatch):
    monkeypatch.setenv("WIRECUT_WORKERS", "2")

    def fail() -> None:
        raise OutputError("cannot write pieces.dxf")

    with pytest.raises(OutputError, match="pieces.dxf"):
        write_report(_data(), tmp_path, meanwhile=fail)
    # the pictures the workers were drawing are complete, not cut off mid-file
    for png in (tmp_path / "report_files").glob("*.png"):
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not (tmp_path / "report.html").exists()


def test_the_total_machine_time_says_when_pieces_have_no_program(tmp_path):
    from dataclasses import replace

    data = _data()
    text = write_report(data, tmp_path / "all").read_text("utf-8")
    assert "pieces have a program" not in text
    pj = json.loads(json.dumps(data.plan_json))
    pj["pieces"][1]["gcode"] = None
    pj["pieces"][1]["machine_time_s"] = None
    text = write_report(replace(data, plan_json=pj), tmp_path / "some").read_text("utf-8")
    assert "1 of 2 pieces have a program (see the findings)" in text


def test_a_piece_without_a_block_says_so_on_its_sheet(tmp_path):
    from dataclasses import replace

    data = _data()
    pj = json.loads(json.dumps(data.plan_json))
    pj["pieces"][1]["stock"] = None
    text = write_report(replace(data, plan_json=pj), tmp_path).read_text("utf-8")
    sheet = text[text.index("id='piece-P02'") :]
    assert "no block on hand takes this blank (see the findings)" in sheet
    assert (
        "no block on hand" not in text[text.index("id='piece-P01'") : text.index("id='piece-P02'")]
    )
