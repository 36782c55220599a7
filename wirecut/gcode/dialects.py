"""The two G-code dialects: axis letters, feed modes, feed-distance rules and number formats.

Both the writer and the reader take every dialect-dependent choice from here, so that what is
written is read back by the same rules.

``xyuv-inverse-time``
    Axes X Y (left tower) U V (right tower). Feeds in inverse time (``G93``): ``F`` is the
    reciprocal of the move's duration in minutes and must appear on every ``G1``
    (RS274/NGC, NIST IR 6556 section 3.5.19 "Set Feed Rate Mode"). The move's duration
    does not depend on any distance rule, which suits two towers moving different lengths.
``four-axis-units-per-minute``
    Axis letters from ``job.machine.axes``; feeds in units per minute (``G94``): ``F`` is a
    speed in mm/min applied to a distance the controller measures by its own rule
    (``job.machine.feed_rule``): ``first-tower`` is the first tower's travel in its plane
    (falling back to the second tower's when the first does not move) and ``all-axes`` the
    Euclidean length of the four-axis move.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from wirecut.config import Dialect, FeedRule, JobProfile
from wirecut.errors import GcodeError

__all__ = [
    "XYUV",
    "POSITION_DECIMALS",
    "FEED_SIGNIFICANT_DIGITS",
    "DialectSpec",
    "dialect_spec",
    "feed_distance_mm",
    "feed_words",
    "feed_duration_s",
    "format_position",
    "format_significant",
    "round_positions",
]

XYUV = ("X", "Y", "U", "V")
"""Axis letters of the inverse-time dialect: X Y the left tower, U V the right tower."""

POSITION_DECIMALS = 3
"""Decimals of every written position, mm (0.0005 mm worst rounding)."""

FEED_SIGNIFICANT_DIGITS = 6
"""Significant digits of F and of dwell times (relative rounding at most 5e-6)."""


@dataclass(frozen=True)
class DialectSpec:
    """Everything dialect-dependent the writer and reader need.

    Attributes
    ----------
    dialect : Dialect
        Which dialect.
    axes : tuple of 4 str
        Letters of (left x, left y, right x, right y), i.e. machine X Y U V.
    inverse_time : bool
        True for ``G93`` (F = 1/minutes on every G1), False for ``G94`` (F in mm/min).
    feed_rule : FeedRule
        Distance rule of a units-per-minute controller (unused in inverse time).
    preamble : tuple of str
        Mode lines written after the header, before the first motion.
    max_line_chars : int
        Longest line written, characters.
    """

    dialect: Dialect
    axes: tuple[str, str, str, str]
    inverse_time: bool
    feed_rule: FeedRule
    preamble: tuple[str, ...]
    max_line_chars: int


def dialect_spec(job: JobProfile, dialect: Dialect | str | None = None) -> DialectSpec:
    """The :class:`DialectSpec` of ``dialect`` (default: the job's) under ``job``'s machine.

    Parameters
    ----------
    job : JobProfile
        Supplies ``machine.axes`` and ``machine.feed_rule`` for the four-axis dialect.
    dialect : Dialect or str, optional
        Overrides ``job.machine.dialect``.
    """
    d = job.machine.dialect if dialect is None else Dialect.parse(dialect, "dialect")
    if d is Dialect.XYUV_INVERSE_TIME:
        return DialectSpec(
            dialect=d,
            axes=XYUV,
            inverse_time=True,
            feed_rule=job.machine.feed_rule,
            preamble=("G21 G90 G17", "G61", "G93"),
            max_line_chars=80,
        )
    return DialectSpec(
        dialect=d,
        axes=tuple(a.upper() for a in job.machine.axes),
        inverse_time=False,
        feed_rule=job.machine.feed_rule,
        preamble=("G21 G90", "G94"),
        max_line_chars=80,
    )


def feed_distance_mm(delta: np.ndarray, rule: FeedRule) -> np.ndarray:
    """The distance a units-per-minute controller applies F to, per move.

    Parameters
    ----------
    delta : (n, 4) float, mm, machine frame
        Axis increments (dX, dY, dU, dV) of each move.
    rule : FeedRule
        ``FIRST_TOWER``: ``hypot(dX, dY)``, or ``hypot(dU, dV)`` where the first tower does
        not move. ``ALL_AXES``: ``sqrt(dX^2 + dY^2 + dU^2 + dV^2)``.

    Returns
    -------
    (n,) float, mm
        Zero only where no axis moves.
    """
    delta = np.asarray(delta, float).reshape(-1, 4)
    if rule is FeedRule.ALL_AXES:
        return np.sqrt(np.einsum("ij,ij->i", delta, delta))
    first = np.hypot(delta[:, 0], delta[:, 1])
    second = np.hypot(delta[:, 2], delta[:, 3])
    return np.where(first > 0.0, first, second)


def feed_words(duration_s: np.ndarray, distance_mm: np.ndarray, spec: DialectSpec) -> np.ndarray:
    """F values that make each move take ``duration_s``.

    Parameters
    ----------
    duration_s : (n,) float, s
        Planned durations, all > 0.
    distance_mm : (n,) float, mm
        Feed distance by the dialect's rule (:func:`feed_distance_mm`); unused in inverse time.
    spec : DialectSpec
        The dialect.

    Returns
    -------
    (n,) float
        Inverse time: 1/min (``60 / duration_s``). Units per minute: mm/min
        (``distance_mm / (duration_s / 60)``).
    """
    minutes = np.asarray(duration_s, float) / 60.0
    if spec.inverse_time:
        return 1.0 / minutes
    return np.asarray(distance_mm, float) / minutes


def feed_duration_s(f_word: float, distance_mm: float, spec: DialectSpec) -> float:
    """Duration of one feed move from its F word, s: the inverse of :func:`feed_words`."""
    if spec.inverse_time:
        return 60.0 / f_word
    return 60.0 * distance_mm / f_word


def round_positions(towers: np.ndarray) -> np.ndarray:
    """Positions rounded as they are written, mm (no negative zero).

    Parameters
    ----------
    towers : (m, 4) float, mm, machine frame

    Returns
    -------
    (m, 4) float, mm, rounded to :data:`POSITION_DECIMALS`.
    """
    return np.round(np.asarray(towers, float), POSITION_DECIMALS) + 0.0


def format_position(value: float) -> str:
    """A position in fixed notation with :data:`POSITION_DECIMALS` decimals (mm)."""
    text = f"{value:.{POSITION_DECIMALS}f}"
    return "0.000" if text == "-0.000" else text


def format_significant(value: float, digits: int = FEED_SIGNIFICANT_DIGITS) -> str:
    """A positive number in fixed notation (never an exponent) with ``digits`` significant digits.

    G-code numbers have no exponent form, so ``1e-05`` must be written ``0.0000100000``.
    Trailing zeros after the point are dropped; at most 12 decimals are written.

    Parameters
    ----------
    value : float
        Finite and > 0.
    digits : int
        Significant digits kept.
    """
    if not (math.isfinite(value) and value > 0.0):
        raise GcodeError(f"format_significant needs a finite positive number, got {value!r}")
    exponent = math.floor(math.log10(value))
    decimals = min(12, max(0, digits - 1 - exponent))
    text = f"{value:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text
