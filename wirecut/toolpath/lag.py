"""Wire lag: how far the hot wire bows behind the line between the towers, and what to do about it.

Model (docs/methods-toolpath.md). The wire is a taut string of tension T over the span L between
the towers. Where it passes through foam it is loaded by the drag of the melting foam, q per
unit length, taken proportional to the cutting speed v. Statics of a string: T w'' = -q, so the
deflection w(z) = M(z) / T where M is the bending moment of a simply supported beam of length L
under the same load. For a load over a central part of width b the mid-span deflection is

    w_mid = q b (2L - b) / (8 T)        (q L^2 / (8 T) for b = L),

so with a reference cut (lag ``lag_ref_mm`` measured at speed ``lag_ref_speed_mm_s`` on a block
of width ``lag_ref_width_mm``)

    lag(v, b) = lag_ref * (v / v_ref) * b (2L - b) / (b_ref (2L - b_ref)).

The shape along the wire for a block at [z1, z2] follows from M(z) (linear outside the foam,
parabolic inside); :func:`deflection_shape` normalises it so that a centred block gives 1 at
mid-span. When the towers stop the bow relaxes exponentially with time constant
``lag_relax_s``.

Compensation, all against a share of the surface tolerance (``allowed_mm``):

- corner: steady lag l trailing along the incoming direction u1 when the path turns by angle a
  to u2; the cut point then joins K - l u1 to about K + l u2, a chord whose distance from the
  corner K is l sin(a / 2). Where that exceeds ``allowed_mm`` the towers dwell at the corner
  until the bow has decayed, t = tau ln(l sin(a/2) / allowed).
- curve: on a path of radius rho the steady trailing point lies on the tangent, a distance
  sqrt(rho^2 + l^2) - rho ~ l^2 / (2 rho) off the path; with the bow relaxing at tau its
  direction also trails the path's by v tau / rho, adding l v tau / rho toward the inside.
  With l = g v (g = lag per unit speed) the speed is capped so that
  v^2 (g^2 / 2 + g tau) / rho <= ``allowed_mm``.
- exit: the sweep continues past the block by at least the lag so the bowed middle leaves the
  foam before the wire rises.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from wirecut.config import WireSpec

__all__ = [
    "mid_span_lag_mm",
    "deflection_shape",
    "block_lag_gain_s",
    "corner_error_mm",
    "rounding_error_mm",
    "dwell_time_s",
    "turn_angles",
    "circumradius",
    "LagPlan",
    "plan_lag",
]


def mid_span_lag_mm(
    speed_mm_s: np.ndarray | float, width_mm: float, wire: WireSpec, span_mm: float
):
    """Mid-span lag (mm) of the taut-string model at cutting speed ``speed_mm_s`` (mm/s).

    Parameters
    ----------
    speed_mm_s : float or (n,) float, mm/s
        Cutting speed.
    width_mm : float, mm
        Foam width b along the wire (block end face to end face), 0 < b <= span.
    wire : WireSpec
        ``lag_ref_mm``, ``lag_ref_speed_mm_s``, ``lag_ref_width_mm``.
    span_mm : float, mm
        Tower span L.

    Returns
    -------
    float or (n,) float, mm
        ``lag_ref * (v / v_ref) * b (2L - b) / (b_ref (2L - b_ref))``.
    """
    b = min(max(float(width_mm), 0.0), span_mm)
    b_ref = min(float(wire.lag_ref_width_mm), span_mm)
    width_factor = b * (2.0 * span_mm - b) / (b_ref * (2.0 * span_mm - b_ref))
    return (
        wire.lag_ref_mm * (np.asarray(speed_mm_s, float) / wire.lag_ref_speed_mm_s) * width_factor
    )


def _moment(z: np.ndarray, z1: float, z2: float, span_mm: float) -> np.ndarray:
    """Bending moment (mm^2 per unit load) of a simply supported span, unit load on [z1, z2]."""
    z = np.clip(np.asarray(z, float), 0.0, span_mm)
    b = z2 - z1
    r1 = b * (span_mm - 0.5 * (z1 + z2)) / span_mm  # left reaction
    inside = np.clip(z, z1, z2) - z1
    m = r1 * z - 0.5 * inside**2
    # beyond z2 the whole load acts at its centroid
    return np.where(z > z2, r1 * z - b * (z - 0.5 * (z1 + z2)), m)


def deflection_shape(z: np.ndarray, z1: float, z2: float, span_mm: float) -> np.ndarray:
    """Deflection along the wire (n,), as a fraction of :func:`mid_span_lag_mm`.

    Parameters
    ----------
    z : (n,) float, mm, machine frame
        Positions along the wire.
    z1, z2 : float, mm, machine frame
        The block's end faces (the loaded part of the wire).
    span_mm : float, mm
        Tower span.

    Returns
    -------
    (n,) float
        M(z) / M_c with M the moment of the actual load and M_c = b (2L - b) / 8 the mid-span
        moment of a centred load of the same width: 1 at mid-span for a centred block, 0 at the
        towers, linear between a tower and the foam.
    """
    b = z2 - z1
    m_c = b * (2.0 * span_mm - b) / 8.0
    return _moment(z, z1, z2, span_mm) / m_c


def block_lag_gain_s(z1: float, z2: float, wire: WireSpec, span_mm: float) -> float:
    """Largest lag inside the block per unit speed, s (lag in mm = gain * speed in mm/s).

    The moment is largest where the shear vanishes, z* = z1 + R1 (unit load), which lies in
    the block; for a centred block this is mid-span and the gain is lag(v, b) / v.
    """
    b = z2 - z1
    r1 = b * (span_mm - 0.5 * (z1 + z2)) / span_mm
    z_star = z1 + r1
    peak = float(deflection_shape(np.array([z_star]), z1, z2, span_mm)[0])
    return float(mid_span_lag_mm(1.0, b, wire, span_mm)) * peak


def corner_error_mm(lag_mm: np.ndarray, turn_rad: np.ndarray) -> np.ndarray:
    """Corner cut by a trailing wire: ``lag * sin(turn / 2)`` (chord from K - l u1 to K + l u2)."""
    return np.asarray(lag_mm, float) * np.sin(0.5 * np.asarray(turn_rad, float))


def rounding_error_mm(lag_mm: np.ndarray, radius_mm: np.ndarray) -> np.ndarray:
    """Steady offset of a trailing point on a path of radius rho: ``sqrt(rho^2 + l^2) - rho``."""
    l = np.asarray(lag_mm, float)
    r = np.asarray(radius_mm, float)
    return l * l / (np.sqrt(r * r + l * l) + r)


def dwell_time_s(error_mm: np.ndarray, allowed_mm: float, relax_s: float) -> np.ndarray:
    """Dwell (s) for an exponentially relaxing bow to bring ``error_mm`` under ``allowed_mm``.

    ``t = relax_s * ln(error / allowed)`` where error > allowed, else 0.
    """
    e = np.asarray(error_mm, float)
    ratio = np.where(e > allowed_mm, e / allowed_mm, 1.0)
    return relax_s * np.log(ratio)


def turn_angles(path: np.ndarray) -> np.ndarray:
    """Turn angle (k,) rad at each vertex of a polyline (k, 2) mm; 0 at the two ends.

    Zero-length segments take the direction of their neighbours.
    """
    p = np.asarray(path, float)
    k = len(p)
    out = np.zeros(k)
    if k < 3:
        return out
    d = np.diff(p, axis=0)
    n = np.linalg.norm(d, axis=1)
    good = n > 1e-12
    if not good.any():
        return out
    idx = np.where(good, np.arange(len(d)), -1)
    idx = np.maximum.accumulate(idx)
    first = int(np.argmax(good))
    idx[idx < 0] = first
    u = d[idx] / n[idx, None]
    cross = u[:-1, 0] * u[1:, 1] - u[:-1, 1] * u[1:, 0]
    dot = np.sum(u[:-1] * u[1:], axis=1)
    out[1:-1] = np.abs(np.arctan2(cross, dot))
    return out


def circumradius(path: np.ndarray) -> np.ndarray:
    """Radius (k,) mm of the circle through each vertex and its two neighbours; inf at the ends
    and on straight runs."""
    p = np.asarray(path, float)
    k = len(p)
    out = np.full(k, np.inf)
    if k < 3:
        return out
    a, b, c = p[:-2], p[1:-1], p[2:]
    ab = np.linalg.norm(b - a, axis=1)
    bc = np.linalg.norm(c - b, axis=1)
    ca = np.linalg.norm(a - c, axis=1)
    area2 = np.abs(
        (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    )
    # a huge radius may overflow to inf: a straight run, as it should read
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        r = ab * bc * ca / (2.0 * area2)  # R = abc / (4 area) (standard triangle geometry)
    out[1:-1] = np.where(area2 > 1e-12, r, np.inf)
    return out


@dataclass(frozen=True)
class LagPlan:
    """Lag compensation along one feed path.

    Attributes
    ----------
    turn_rad : (k,) float, rad
        Turn angle at each vertex of the path.
    corner : (k,) bool
        Vertices where the corner error of the incoming lag exceeds the allowance.
    dwell_s : (k,) float, s
        Dwell after arriving at each vertex (0 where not a corner).
    speed_cap_mm_s : (k - 1,) float, mm/s
        Highest speed on each move for the curve rounding to stay within the allowance (inf
        where no cap applies).
    corner_error_mm : (k,) float, mm
        Estimated corner error without a dwell.
    """

    turn_rad: np.ndarray
    corner: np.ndarray
    dwell_s: np.ndarray
    speed_cap_mm_s: np.ndarray
    corner_error_mm: np.ndarray


def plan_lag(
    path: np.ndarray,
    speed_mm_s: np.ndarray,
    in_foam: np.ndarray,
    gain_s: float,
    allowed_mm: float,
    relax_s: float,
) -> LagPlan:
    """Dwells at sharp corners and speed caps on tight curves for one feed path.

    Parameters
    ----------
    path : (k, 2) float, mm, machine frame
        Positions of the wire section where the lag is largest (e.g. the block's middle plane).
    speed_mm_s : (k - 1,) float, mm/s
        Speed of that section on each move (the lag of move i is ``gain_s * speed[i]``).
    in_foam : (k,) bool
        Vertices where the wire is in foam (no drag, no lag elsewhere).
    gain_s : float, s
        Lag per unit speed (:func:`block_lag_gain_s`).
    allowed_mm : float, mm
        Share of the surface tolerance the lag may use.
    relax_s : float, s
        Time constant of the bow's relaxation.
    """
    p = np.asarray(path, float)
    v = np.asarray(speed_mm_s, float)
    foam = np.asarray(in_foam, bool)
    k = len(p)
    turn = turn_angles(p)
    lag_in = np.zeros(k)
    lag_in[1:] = gain_s * v
    err = np.where(foam, corner_error_mm(lag_in, turn), 0.0)
    corner = err > allowed_mm
    dwell = np.where(corner, dwell_time_s(err, allowed_mm, relax_s), 0.0)
    rho = circumradius(p)
    rho = np.where(corner | ~foam, np.inf, rho)
    # steady trailing point l^2 / (2 rho) plus the first-order phase lag of the bow, l v tau / rho
    # (the bow's direction trails the path's by omega tau = v tau / rho): with l = g v the error
    # is v^2 (g^2 / 2 + g tau) / rho
    coeff = 0.5 * gain_s * gain_s + gain_s * relax_s
    with np.errstate(divide="ignore", over="ignore"):  # no lag (coeff 0): no cap
        v_vertex = np.where(coeff > 0, np.sqrt(rho * allowed_mm / max(coeff, 1e-300)), np.inf)
    cap = np.minimum(v_vertex[:-1], v_vertex[1:]) if k >= 2 else np.zeros(0)
    return LagPlan(turn, corner, dwell, cap, err)
