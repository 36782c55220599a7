"""Calibration of the wire's kerf and lag constants from measured test cuts.

The job profile models the kerf (width of foam the hot wire removes) and the lag (how far the
middle of the wire trails the towers) as (see :class:`wirecut.config.WireSpec`)::

    kerf(v)    = kerf_base_mm + kerf_speed_coeff_mm2_s / v
    lag(v, b)  = lag_ref_mm * (v / v_ref) * g(b) / g(b_ref),   g(b) = b (2 L - b)

with ``v`` the face speed (mm/s), ``b`` the foam width along the wire, ``L`` the span (mm),
``v_ref = wire.lag_ref_speed_mm_s`` and ``b_ref = wire.lag_ref_width_mm``. Both are linear in
their constants, so they are fitted by ordinary least squares: the kerf on the regressors
``(1, 1/v)``, the lag through the origin on ``x = (v / v_ref) g(b) / g(b_ref)``. Standard
errors come from the covariance ``s^2 (X^T X)^-1`` with the residual variance
``s^2 = RSS / (n - p)``: ordinary least squares, as in any regression text (e.g. N. R. Draper
and H. Smith, *Applied Regression Analysis*, Wiley), the through-origin line included.

The test cuts are a CSV file of our own layout (docs/calibration.md)::

    kind,speed_mm_s,measured_mm,width_mm
    kerf,2.0,1.52,
    lag,4.0,2.10,1000

``kind`` is ``kerf`` (``measured_mm`` = slot width across the cut) or ``lag`` (``measured_mm`` =
mid-span lag read at a corner cut, ``width_mm`` = foam width along the wire of that test block).
Blank lines and lines starting with ``#`` are skipped.
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from wirecut.config import JobProfile
from wirecut.errors import JobError, OutputError
from wirecut.findings import Finding, Severity

__all__ = ["TestCuts", "LinearFit", "Calibration", "read_test_cuts", "parse_test_cuts", "calibrate"]

_COLUMNS = ("kind", "speed_mm_s", "measured_mm", "width_mm")
_REQUIRED = ("kind", "speed_mm_s", "measured_mm")
_KINDS = ("kerf", "lag")


@dataclass(frozen=True)
class TestCuts:
    """Measured test cuts, one row per cut.

    Attributes
    ----------
    kind : (n,) str
        ``"kerf"`` or ``"lag"``.
    speed_mm_s : (n,) float, mm/s
        Face speed of the cut.
    measured_mm : (n,) float, mm
        Slot width (kerf rows) or mid-span lag (lag rows).
    width_mm : (n,) float, mm
        Foam width along the wire (lag rows); NaN where not given.
    line : (n,) int
        Line number of each row in the source, for messages.
    source : str
        Where the cuts were read from.
    """

    __test__ = False  # not a pytest test class despite its name

    kind: np.ndarray
    speed_mm_s: np.ndarray
    measured_mm: np.ndarray
    width_mm: np.ndarray
    line: np.ndarray
    source: str = "test cuts"

    def select(self, kind: str) -> np.ndarray:
        """Boolean mask (n,) of the rows of one kind."""
        return self.kind == kind


@dataclass(frozen=True)
class LinearFit:
    """An ordinary least-squares fit ``y = X beta``.

    Attributes
    ----------
    estimate : (p,) float
        The constants, in the units of the model (kerf: mm, mm^2/s; lag: mm).
    stderr : (p,) float
        Their standard errors, same units.
    covariance : (p, p) float
        ``s^2 (X^T X)^-1``.
    residual_sd : float
        ``s = sqrt(RSS / (n - p))``, mm.
    n : int
        Number of cuts used.
    """

    estimate: np.ndarray
    stderr: np.ndarray
    covariance: np.ndarray
    residual_sd: float
    n: int

    @property
    def dof(self) -> int:
        """Residual degrees of freedom, n - p."""
        return self.n - len(self.estimate)


def _ols(x: np.ndarray, y: np.ndarray) -> LinearFit:
    """Ordinary least squares of ``y (n,)`` on the columns of ``x (n, p)`` with its covariance."""
    n, p = x.shape
    beta, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    if rank < p:
        raise JobError("the test cuts cannot separate the constants (use several speeds)")
    resid = y - x @ beta
    s2 = float(resid @ resid) / (n - p)
    cov = s2 * np.linalg.inv(x.T @ x)
    return LinearFit(beta, np.sqrt(np.diag(cov)), cov, math.sqrt(s2), n)


@dataclass(frozen=True)
class Calibration:
    """Fitted kerf and lag constants with their uncertainties.

    Attributes
    ----------
    kerf : LinearFit or None
        ``estimate = (kerf_base_mm, kerf_speed_coeff_mm2_s)``; None without kerf cuts.
    lag : LinearFit or None
        ``estimate = (lag_ref_mm,)`` at ``lag_ref_speed_mm_s`` and ``lag_ref_width_mm``; None
        without lag cuts.
    lag_ref_speed_mm_s, lag_ref_width_mm, span_mm : float
        The reference speed (mm/s), width (mm) and span (mm) of the lag model (from the job).
    cuts : TestCuts
        The data.
    findings : tuple of Finding
        Notes on the fit (a constant below zero, too few cuts of one kind...).
    """

    kerf: LinearFit | None
    lag: LinearFit | None
    lag_ref_speed_mm_s: float
    lag_ref_width_mm: float
    span_mm: float
    cuts: TestCuts
    findings: tuple[Finding, ...] = field(default=())

    def lag_factor(self, speed_mm_s: np.ndarray, width_mm: np.ndarray) -> np.ndarray:
        """Regressor ``(v / v_ref) g(b) / g(b_ref)`` of the lag model, (n,) dimensionless."""
        g = lambda b: b * (2.0 * self.span_mm - b)  # noqa: E731 - the taut-string shape factor
        v = np.asarray(speed_mm_s, float)
        return (
            v / self.lag_ref_speed_mm_s * g(np.asarray(width_mm, float)) / g(self.lag_ref_width_mm)
        )

    def kerf_at(self, speed_mm_s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Fitted kerf (n,) mm at speeds (n,) mm/s and the standard error of that mean (n,) mm."""
        if self.kerf is None:
            raise JobError("no kerf cuts were calibrated")
        v = np.asarray(speed_mm_s, float)
        x = np.column_stack([np.ones_like(v), 1.0 / v])
        mean = x @ self.kerf.estimate
        se = np.sqrt(np.einsum("ij,jk,ik->i", x, self.kerf.covariance, x))
        return mean, se

    def toml_lines(self) -> list[str]:
        """The ``[wire]`` lines to paste into a job profile, with the uncertainties as comments.

        A constant fitted below zero (the profile refuses it) is written as 0 with a comment.
        """
        out = ["[wire]"]

        def line(key: str, value: float, se: float, unit: str) -> str:
            shown = max(value, 0.0)
            note = f"# +/- {se:.3g} {unit} (1 standard error)"
            if value < 0.0:
                note += f"; fitted {value:.4g}, below zero, written as 0"
            return f"{key} = {shown:.4g}  {note}"

        if self.kerf is not None:
            (b, c), (sb, sc) = self.kerf.estimate, self.kerf.stderr
            out.append(line("kerf_base_mm", b, sb, "mm"))
            out.append(line("kerf_speed_coeff_mm2_s", c, sc, "mm^2/s"))
        if self.lag is not None:
            out.append(line("lag_ref_mm", self.lag.estimate[0], self.lag.stderr[0], "mm"))
            out.append(f"lag_ref_speed_mm_s = {self.lag_ref_speed_mm_s:.6g}")
            out.append(f"lag_ref_width_mm = {self.lag_ref_width_mm:.6g}")
        return out

    def write_plot(self, path_png: str | Path) -> Path:
        """Plot the cuts, the fits and a band of +/- 2 standard errors of the fitted mean (PNG)."""
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        path = Path(path_png)
        panels = [k for k, f in (("kerf", self.kerf), ("lag", self.lag)) if f is not None]
        fig = Figure(figsize=(5.0 * len(panels), 3.8), dpi=110)
        FigureCanvasAgg(fig)
        for i, kind in enumerate(panels):
            ax = fig.add_subplot(1, len(panels), i + 1)
            m = self.cuts.select(kind)
            v = self.cuts.speed_mm_s[m]
            grid = np.linspace(0.9 * v.min(), 1.1 * v.max(), 200)
            if kind == "kerf":
                mean, se = self.kerf_at(grid)
                ax.plot(v, self.cuts.measured_mm[m], "o", color="#1f5f8b", label="slot width")
                ax.set_ylabel("kerf (mm)")
                ax.set_title("kerf = base + coeff / v")
            else:
                # each lag reading scaled to the reference width, so one line fits all
                f = self.lag_factor(v, self.cuts.width_mm[m])
                scaled = self.cuts.measured_mm[m] * (v / self.lag_ref_speed_mm_s) / f
                ax.plot(v, scaled, "o", color="#8b3a1f", label="lag at the reference width")
                k = grid / self.lag_ref_speed_mm_s
                mean, se = k * self.lag.estimate[0], k * self.lag.stderr[0]
                ax.set_ylabel("mid-span lag (mm)")
                ax.set_title(f"lag at b = {self.lag_ref_width_mm:g} mm")
            ax.plot(grid, mean, color="black", lw=1.2, label="least-squares fit")
            ax.fill_between(
                grid, mean - 2 * se, mean + 2 * se, color="0.6", alpha=0.4, label="fit +/- 2 s.e."
            )
            ax.set_xlabel("face speed v (mm/s)")
            ax.grid(alpha=0.3)
            ax.legend(fontsize=8)
        fig.tight_layout()
        try:
            fig.savefig(path, format="png", metadata={"Software": None})
        except OSError as exc:
            raise OutputError(f"cannot write the calibration plot {path}: {exc}") from None
        return path


def _number(text: str, column: str, where: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise JobError(f"{where}: {column} = {text!r} is not a number") from None
    if not math.isfinite(value):
        raise JobError(f"{where}: {column} = {text!r} must be finite")
    return value


def parse_test_cuts(text: str, source: str = "test cuts") -> TestCuts:
    """Parse CSV text of test cuts (layout: module docstring); see :func:`read_test_cuts`."""
    lines = [
        (i + 1, raw)
        for i, raw in enumerate(text.splitlines())
        if raw.strip() and not raw.lstrip().startswith("#")
    ]
    if not lines:
        raise JobError(f"{source}: no header and no test cuts")
    rows = list(csv.reader(io.StringIO("\n".join(raw for _, raw in lines))))
    header = [h.strip().lower() for h in rows[0]]
    for h in header:
        if h not in _COLUMNS:
            raise JobError(
                f"{source}:{lines[0][0]}: unknown column {h!r} (columns: {', '.join(_COLUMNS)})"
            )
    for h in _REQUIRED:
        if h not in header:
            raise JobError(f"{source}:{lines[0][0]}: the header lacks the column {h!r}")
    if len(set(header)) != len(header):
        raise JobError(f"{source}:{lines[0][0]}: a column is named twice")
    kinds, speeds, measured, widths, numbers = [], [], [], [], []
    for (lineno, _), row in zip(lines[1:], rows[1:], strict=True):
        where = f"{source}:{lineno}"
        if len(row) > len(header):
            raise JobError(f"{where}: {len(row)} fields, the header has {len(header)}")
        cells = dict(
            zip(header, [c.strip() for c in row] + [""] * (len(header) - len(row)), strict=True)
        )
        kind = cells["kind"].lower()
        if kind not in _KINDS:
            raise JobError(f"{where}: kind = {cells['kind']!r} is not one of 'kerf', 'lag'")
        v = _number(cells["speed_mm_s"], "speed_mm_s", where)
        if v <= 0.0:
            raise JobError(f"{where}: speed_mm_s = {v:g} must be > 0")
        m = _number(cells["measured_mm"], "measured_mm", where)
        if m < 0.0 or (kind == "kerf" and m == 0.0):
            raise JobError(f"{where}: measured_mm = {m:g} must be > 0 for a kerf, >= 0 for a lag")
        w_text = cells.get("width_mm", "")
        if kind == "lag" and not w_text:
            raise JobError(f"{where}: a lag cut needs width_mm (foam width along the wire)")
        w = _number(w_text, "width_mm", where) if w_text else math.nan
        if w_text and w <= 0.0:
            raise JobError(f"{where}: width_mm = {w:g} must be > 0")
        kinds.append(kind)
        speeds.append(v)
        measured.append(m)
        widths.append(w)
        numbers.append(lineno)
    if not kinds:
        raise JobError(f"{source}: the header is there but no test cut follows")
    return TestCuts(
        np.array(kinds),
        np.array(speeds),
        np.array(measured),
        np.array(widths),
        np.array(numbers),
        source,
    )


def read_test_cuts(path: str | Path) -> TestCuts:
    """Read test cuts from a CSV file.

    Raises
    ------
    JobError
        The file is missing or unreadable, or a row is malformed (the message names the line
        and the column).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise JobError(f"test cuts file {p} does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise JobError(f"test cuts file {p} cannot be read: {exc.__class__.__name__}") from None
    return parse_test_cuts(text, source=str(p))


def calibrate(cuts: TestCuts, job: JobProfile) -> Calibration:
    """Fit the kerf and lag constants of ``job``'s wire model to measured cuts.

    The kerf needs at least 3 kerf cuts at 2 or more speeds; the lag at least 2 lag cuts. A kind
    with no cut is left out (its fit is None, with an info finding); a kind with too few cuts,
    or lag cuts wider than the span, raises :class:`JobError`.
    """
    findings: list[Finding] = []
    span = job.machine.span_mm
    kerf_fit = lag_fit = None
    km = cuts.select("kerf")
    if km.any():
        v, y = cuts.speed_mm_s[km], cuts.measured_mm[km]
        if km.sum() < 3 or len(np.unique(v)) < 2:
            raise JobError(
                f"{cuts.source}: the kerf fit needs at least 3 kerf cuts at 2 or more speeds, "
                f"got {int(km.sum())} at {len(np.unique(v))} speed(s)"
            )
        kerf_fit = _ols(np.column_stack([np.ones_like(v), 1.0 / v]), y)
    else:
        findings.append(
            Finding(
                "calibration-no-kerf-cuts",
                "no kerf cuts: the kerf constants are unchanged",
                severity=Severity.INFO,
            )
        )
    cal = Calibration(
        None, None, job.wire.lag_ref_speed_mm_s, job.wire.lag_ref_width_mm, span, cuts
    )
    lm = cuts.select("lag")
    if lm.any():
        w = cuts.width_mm[lm]
        bad = (w > span) | ~np.isfinite(w)
        if bad.any():
            i = int(np.flatnonzero(lm)[np.flatnonzero(bad)[0]])
            raise JobError(
                f"{cuts.source}:{cuts.line[i]}: width_mm = {cuts.width_mm[i]:g} must not exceed "
                f"the span machine.span_mm = {span:g}"
            )
        if lm.sum() < 2:
            raise JobError(f"{cuts.source}: the lag fit needs at least 2 lag cuts, got 1")
        x = cal.lag_factor(cuts.speed_mm_s[lm], w)
        lag_fit = _ols(x[:, None], cuts.measured_mm[lm])
    else:
        findings.append(
            Finding(
                "calibration-no-lag-cuts",
                "no lag cuts: the lag constants are unchanged",
                severity=Severity.INFO,
            )
        )
    names = (
        ("kerf_base_mm", kerf_fit, 0),
        ("kerf_speed_coeff_mm2_s", kerf_fit, 1),
        ("lag_ref_mm", lag_fit, 0),
    )
    for key, fit, j in names:
        if fit is not None and fit.estimate[j] < 0.0:
            findings.append(
                Finding(
                    "calibration-negative-constant",
                    f"wire.{key} fitted {fit.estimate[j]:.3g} +/- {fit.stderr[j]:.2g}, below zero: "
                    "check the measurements; the profile takes 0",
                )
            )
    return Calibration(
        kerf_fit, lag_fit, cal.lag_ref_speed_mm_s, cal.lag_ref_width_mm, span, cuts, tuple(findings)
    )
