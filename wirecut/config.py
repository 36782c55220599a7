"""The job profile: frozen dataclasses, TOML loading and validation.

A profile describes the machine, the wire, the foam, the stock blocks, the tolerance, the piece
rules and the mold. It is loaded once, validated on entry, and passed explicitly to every stage;
vary it with :func:`dataclasses.replace`. Unknown keys, wrong types and impossible values raise
:class:`~wirecut.errors.ProfileError` with the key's dotted name in a one-line message.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, fields, replace
from enum import Enum
from importlib import resources
from pathlib import Path
from typing import Any

from wirecut.errors import ProfileError

__all__ = [
    "Policy",
    "Dialect",
    "FeedRule",
    "MoldSide",
    "Units",
    "MachineSpec",
    "WireSpec",
    "FoamSpec",
    "StockSpec",
    "ToleranceSpec",
    "PieceRules",
    "MoldSpec",
    "JobProfile",
    "load_job",
    "parse_job",
    "default_job",
    "parse_enum",
]


class _Choice(str, Enum):
    """String enum whose bad value error lists the valid choices."""

    @classmethod
    def parse(cls, value: Any, key: str) -> _Choice:
        try:
            return cls(value)
        except ValueError:
            choices = ", ".join(repr(m.value) for m in cls)
            raise ProfileError(f"{key} = {value!r} is not one of {choices}") from None


def parse_enum(cls: type[_Choice], value: Any, key: str) -> _Choice:
    """Parse ``value`` into the enum ``cls``; a bad value names ``key`` and the valid choices."""
    return cls.parse(value, key)


class Policy(_Choice):
    """How the fit trades error: ``balanced`` minimizes max |deviation|; ``no-gouge`` never cuts
    into the part and minimizes the excess left on it."""

    BALANCED = "balanced"
    NO_GOUGE = "no-gouge"


class Dialect(_Choice):
    """G-code output dialect (see docs/gcode.md)."""

    XYUV_INVERSE_TIME = "xyuv-inverse-time"
    FOUR_AXIS_UNITS_PER_MINUTE = "four-axis-units-per-minute"


class FeedRule(_Choice):
    """How a units-per-minute controller measures the distance a feed applies to."""

    FIRST_TOWER = "first-tower"
    ALL_AXES = "all-axes"


class MoldSide(_Choice):
    """Where the foam to keep lies relative to the target surface."""

    BELOW = "below"
    ABOVE = "above"


class Units(_Choice):
    """Length units a mesh may be given in; converted to mm on intake."""

    M = "m"
    CM = "cm"
    MM = "mm"
    IN = "in"
    FT = "ft"

    @property
    def to_mm(self) -> float:
        """Factor from this unit to millimetres."""
        return {"m": 1000.0, "cm": 10.0, "mm": 1.0, "in": 25.4, "ft": 304.8}[self.value]


@dataclass(frozen=True)
class MachineSpec:
    """The two-tower machine. Lengths mm, speeds mm/s.

    Attributes
    ----------
    span_mm : float
        Distance between the two tower planes (machine z = 0 and z = span_mm).
    travel_x_mm, travel_y_mm : tuple[float, float]
        Horizontal (X, U) and vertical (Y, V) travel of both towers, machine frame.
    max_axis_speed_mm_s : float
        Top speed of any single axis.
    dialect : Dialect
        G-code output dialect.
    axes : tuple[str, str, str, str]
        Axis letters of the four-axis-units-per-minute dialect (first tower x, y, second x, y).
    feed_rule : FeedRule
        Feed-distance rule of that dialect's controller.
    bed_y_mm : float
        Machine y of the bed the blocks stand on.
    home_clearance_mm : float
        Approach and exit points lie this far outside the block.
    heat_power : float
        S word of the M3 that switches the wire heat on.
    """

    span_mm: float = 1600.0
    travel_x_mm: tuple[float, float] = (0.0, 1200.0)
    travel_y_mm: tuple[float, float] = (0.0, 800.0)
    max_axis_speed_mm_s: float = 25.0
    dialect: Dialect = Dialect.XYUV_INVERSE_TIME
    axes: tuple[str, str, str, str] = ("X", "Y", "Z", "A")
    feed_rule: FeedRule = FeedRule.FIRST_TOWER
    bed_y_mm: float = 0.0
    home_clearance_mm: float = 30.0
    heat_power: float = 60.0

    def drivable_slope(self, sweep_mm: float) -> float:
        """Steepest plan slope |dx/dz| of a ruling the towers can follow across a blank
        ``sweep_mm`` long: extended to the tower planes, a ruling of slope m reaches about
        ``m * span`` further along the sweep at one tower than at the other, which must fit
        in the x travel beside the blank and the two clearances (at most 1: rulings within
        45 degrees of the wire)."""
        room = (self.travel_x_mm[1] - self.travel_x_mm[0]) - sweep_mm - 2 * self.home_clearance_mm
        return float(min(max(room, 0.0) / self.span_mm, 1.0))

    def drivable_tilt(self) -> float:
        """Steepest climb |dy/dz| of a ruling along the wire the towers can follow: extended
        to the tower planes, a ruling of slope s puts one tower ``s * span`` higher than the
        other, which the y travel must hold wherever the blank stands (0.5 for the default
        machine: a surface climbing more than 26.6 deg along the wire cannot be cut with the
        wire along that climb)."""
        return float((self.travel_y_mm[1] - self.travel_y_mm[0]) / self.span_mm)


@dataclass(frozen=True)
class WireSpec:
    """The hot wire: cut speed, kerf model, lag model.

    kerf(v) = kerf_base_mm + kerf_speed_coeff_mm2_s / v   (v: face speed, mm/s)
    lag(v, b) = lag_ref_mm * (v / lag_ref_speed_mm_s) * b (2L - b) / (b_ref (2L - b_ref))
    with L the span and b the foam width along the wire (taut string, docs/methods.md).
    """

    cut_speed_mm_s: float = 4.0
    kerf_base_mm: float = 0.9
    kerf_speed_coeff_mm2_s: float = 1.2
    lag_ref_mm: float = 2.0
    lag_ref_speed_mm_s: float = 4.0
    lag_relax_s: float = 1.5
    lag_ref_width_mm: float = 1000.0


@dataclass(frozen=True)
class FoamSpec:
    """The EPS foam. ``density_kg_m3``: bulk density (kg/m^3)."""

    density_kg_m3: float = 20.0


@dataclass(frozen=True)
class StockSpec:
    """A kind of raw block. ``size_mm`` = (length, width, height), mm; ``count`` on hand."""

    name: str
    size_mm: tuple[float, float, float]
    count: int


@dataclass(frozen=True)
class ToleranceSpec:
    """Allowed |deviation| of the cut surface from the target (mm) and the fitting policy.

    ``lag_share`` is the share of ``surface_mm`` the wire lag may use at corners and on curves
    (dwells and speed caps keep it there); the split keeps each piece's fit within the rest,
    when the wire has a lag at all (``wire.lag_ref_mm > 0``).
    """

    surface_mm: float = 0.5
    policy: Policy = Policy.BALANCED
    lag_share: float = 0.25

    @property
    def fit_share(self) -> float:
        """Share of the tolerance the fit may use when the wire lags (1 - lag_share)."""
        return 1.0 - self.lag_share


@dataclass(frozen=True)
class PieceRules:
    """Rules for splitting into pieces. Lengths mm."""

    min_width_mm: float = 100.0
    face_to_tower_mm: float = 100.0
    top_clearance_mm: float = 20.0
    sweep_margin_mm: float = 20.0


@dataclass(frozen=True)
class MoldSpec:
    """The mold: which side of the surface is kept, the base under it, the part frame's up."""

    side: MoldSide = MoldSide.BELOW
    base_mm: float = 60.0
    up: tuple[float, float, float] = (0.0, 0.0, 1.0)


@dataclass(frozen=True)
class JobProfile:
    """Everything a job needs besides the mesh."""

    machine: MachineSpec = field(default_factory=MachineSpec)
    wire: WireSpec = field(default_factory=WireSpec)
    foam: FoamSpec = field(default_factory=FoamSpec)
    stock: tuple[StockSpec, ...] = (StockSpec("long", (4000.0, 1200.0, 1000.0), 20),)
    tolerance: ToleranceSpec = field(default_factory=ToleranceSpec)
    pieces: PieceRules = field(default_factory=PieceRules)
    mold: MoldSpec = field(default_factory=MoldSpec)
    source: str = "built-in default"

    @property
    def usable_width_mm(self) -> float:
        """Widest block along the wire the machine takes: span minus both tower clearances."""
        return self.machine.span_mm - 2.0 * self.pieces.face_to_tower_mm

    def with_tolerance(self, surface_mm: float) -> JobProfile:
        """A copy with another surface tolerance (validated)."""
        _positive(surface_mm, "tolerance.surface_mm")
        return replace(self, tolerance=replace(self.tolerance, surface_mm=float(surface_mm)))


# --------------------------------------------------------------------------- validation helpers


def _number(value: Any, key: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise ProfileError(f"{key} must be a number, got {type(value).__name__} {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise ProfileError(f"{key} must be a finite number, got {value!r}")
    return v


def _positive(value: Any, key: str) -> float:
    v = _number(value, key)
    if v <= 0.0:
        raise ProfileError(f"{key} must be > 0, got {value!r}")
    return v


def _non_negative(value: Any, key: str) -> float:
    v = _number(value, key)
    if v < 0.0:
        raise ProfileError(f"{key} must be >= 0, got {value!r}")
    return v


def _range(value: Any, key: str) -> tuple[float, float]:
    if not isinstance(value, list) or len(value) != 2:
        raise ProfileError(f"{key} must be a list of two numbers [min, max], got {value!r}")
    lo, hi = (_number(v, key) for v in value)
    if lo >= hi:
        raise ProfileError(f"{key} must have min < max, got [{lo}, {hi}]")
    return (lo, hi)


def _vector(value: Any, key: str, n: int) -> tuple[float, ...]:
    if not isinstance(value, list) or len(value) != n:
        raise ProfileError(f"{key} must be a list of {n} numbers, got {value!r}")
    return tuple(_number(v, key) for v in value)


def _string(value: Any, key: str) -> str:
    if not isinstance(value, str):
        raise ProfileError(f"{key} must be a string, got {type(value).__name__} {value!r}")
    return value


def _table(value: Any, key: str) -> dict:
    if not isinstance(value, dict):
        raise ProfileError(f"[{key}] must be a table, got {type(value).__name__}")
    return value


def _check_keys(table: dict, allowed: set[str], section: str) -> None:
    for k in table:
        if k not in allowed:
            valid = ", ".join(sorted(allowed))
            raise ProfileError(f"unknown key {section}.{k} (valid keys: {valid})")


_SAFE_NAME_CHARS = set("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_.")


def _stock_name(value: Any, key: str) -> str:
    name = _string(value, key)
    if not name or len(name) > 40 or not set(name) <= _SAFE_NAME_CHARS or name.startswith("."):
        raise ProfileError(
            f"{key} = {name!r} must be 1-40 characters of letters, digits, '-', '_' or '.'"
        )
    return name


# --------------------------------------------------------------------------- sections


def _machine(t: dict) -> MachineSpec:
    d = MachineSpec()
    _check_keys(t, {f.name for f in fields(MachineSpec)}, "machine")
    axes = d.axes
    if "axes" in t:
        raw = t["axes"]
        if (
            not isinstance(raw, list)
            or len(raw) != 4
            or not all(isinstance(a, str) and len(a) == 1 and a.isalpha() for a in raw)
            or len({a.upper() for a in raw}) != 4
        ):
            raise ProfileError(f"machine.axes must be four distinct axis letters, got {raw!r}")
        bad = {a.upper() for a in raw} & set("FGMNPSTO")
        if bad:
            raise ProfileError(f"machine.axes must not use the G-code words {sorted(bad)}")
        axes = tuple(a.upper() for a in raw)
    m = MachineSpec(
        span_mm=_positive(t.get("span_mm", d.span_mm), "machine.span_mm"),
        travel_x_mm=_range(t.get("travel_x_mm", list(d.travel_x_mm)), "machine.travel_x_mm"),
        travel_y_mm=_range(t.get("travel_y_mm", list(d.travel_y_mm)), "machine.travel_y_mm"),
        max_axis_speed_mm_s=_positive(
            t.get("max_axis_speed_mm_s", d.max_axis_speed_mm_s), "machine.max_axis_speed_mm_s"
        ),
        dialect=Dialect.parse(t.get("dialect", d.dialect.value), "machine.dialect"),
        axes=axes,
        feed_rule=FeedRule.parse(t.get("feed_rule", d.feed_rule.value), "machine.feed_rule"),
        bed_y_mm=_number(t.get("bed_y_mm", d.bed_y_mm), "machine.bed_y_mm"),
        home_clearance_mm=_positive(
            t.get("home_clearance_mm", d.home_clearance_mm), "machine.home_clearance_mm"
        ),
        heat_power=_non_negative(t.get("heat_power", d.heat_power), "machine.heat_power"),
    )
    if not (m.travel_y_mm[0] <= m.bed_y_mm < m.travel_y_mm[1]):
        raise ProfileError(
            f"machine.bed_y_mm = {m.bed_y_mm} must lie within "
            f"machine.travel_y_mm {list(m.travel_y_mm)}"
        )
    return m


def _wire(t: dict) -> WireSpec:
    d = WireSpec()
    _check_keys(t, {f.name for f in fields(WireSpec)}, "wire")
    return WireSpec(
        cut_speed_mm_s=_positive(t.get("cut_speed_mm_s", d.cut_speed_mm_s), "wire.cut_speed_mm_s"),
        kerf_base_mm=_non_negative(t.get("kerf_base_mm", d.kerf_base_mm), "wire.kerf_base_mm"),
        kerf_speed_coeff_mm2_s=_non_negative(
            t.get("kerf_speed_coeff_mm2_s", d.kerf_speed_coeff_mm2_s), "wire.kerf_speed_coeff_mm2_s"
        ),
        lag_ref_mm=_non_negative(t.get("lag_ref_mm", d.lag_ref_mm), "wire.lag_ref_mm"),
        lag_ref_speed_mm_s=_positive(
            t.get("lag_ref_speed_mm_s", d.lag_ref_speed_mm_s), "wire.lag_ref_speed_mm_s"
        ),
        lag_relax_s=_positive(t.get("lag_relax_s", d.lag_relax_s), "wire.lag_relax_s"),
        lag_ref_width_mm=_positive(
            t.get("lag_ref_width_mm", d.lag_ref_width_mm), "wire.lag_ref_width_mm"
        ),
    )


def _foam(t: dict) -> FoamSpec:
    _check_keys(t, {"density_kg_m3"}, "foam")
    return FoamSpec(
        _positive(t.get("density_kg_m3", FoamSpec().density_kg_m3), "foam.density_kg_m3")
    )


def _stock(items: Any) -> tuple[StockSpec, ...]:
    if not isinstance(items, list) or not items:
        raise ProfileError("[[stock]] must list at least one block kind")
    out = []
    seen = set()
    for i, raw in enumerate(items):
        key = f"stock[{i}]"
        t = _table(raw, key)
        _check_keys(t, {"name", "size_mm", "count"}, key)
        for req in ("name", "size_mm", "count"):
            if req not in t:
                raise ProfileError(f"{key}.{req} is missing")
        name = _stock_name(t["name"], f"{key}.name")
        if name in seen:
            raise ProfileError(f"{key}.name = {name!r} is used twice")
        seen.add(name)
        size = _vector(t["size_mm"], f"{key}.size_mm", 3)
        for s in size:
            if s <= 0:
                raise ProfileError(f"{key}.size_mm must be three lengths > 0, got {list(size)}")
        count = t["count"]
        if isinstance(count, bool) or not isinstance(count, int) or count < 1:
            raise ProfileError(f"{key}.count must be an integer >= 1, got {count!r}")
        out.append(StockSpec(name, size, count))
    return tuple(out)


def _tolerance(t: dict) -> ToleranceSpec:
    d = ToleranceSpec()
    _check_keys(t, {"surface_mm", "policy", "lag_share"}, "tolerance")
    share = _non_negative(t.get("lag_share", d.lag_share), "tolerance.lag_share")
    if share >= 0.9:
        raise ProfileError(f"tolerance.lag_share must be in [0, 0.9), got {share!r}")
    return ToleranceSpec(
        surface_mm=_positive(t.get("surface_mm", d.surface_mm), "tolerance.surface_mm"),
        policy=Policy.parse(t.get("policy", d.policy.value), "tolerance.policy"),
        lag_share=share,
    )


def _pieces(t: dict) -> PieceRules:
    d = PieceRules()
    _check_keys(t, {f.name for f in fields(PieceRules)}, "pieces")
    return PieceRules(
        min_width_mm=_positive(t.get("min_width_mm", d.min_width_mm), "pieces.min_width_mm"),
        face_to_tower_mm=_non_negative(
            t.get("face_to_tower_mm", d.face_to_tower_mm), "pieces.face_to_tower_mm"
        ),
        top_clearance_mm=_non_negative(
            t.get("top_clearance_mm", d.top_clearance_mm), "pieces.top_clearance_mm"
        ),
        sweep_margin_mm=_non_negative(
            t.get("sweep_margin_mm", d.sweep_margin_mm), "pieces.sweep_margin_mm"
        ),
    )


def _mold(t: dict) -> MoldSpec:
    d = MoldSpec()
    _check_keys(t, {"side", "base_mm", "up"}, "mold")
    up = _vector(t.get("up", list(d.up)), "mold.up", 3)
    n = math.sqrt(sum(u * u for u in up))
    if n < 1e-9:
        raise ProfileError("mold.up must be a non-zero vector")
    return MoldSpec(
        side=MoldSide.parse(t.get("side", d.side.value), "mold.side"),
        base_mm=_non_negative(t.get("base_mm", d.base_mm), "mold.base_mm"),
        up=tuple(u / n for u in up),
    )


_SECTIONS = {"machine", "wire", "foam", "stock", "tolerance", "pieces", "mold"}


def parse_job(data: dict, source: str = "profile") -> JobProfile:
    """Validate a parsed TOML document and build a :class:`JobProfile`.

    Missing sections and keys take the defaults of the bundled profile.
    """
    _check_keys(data, _SECTIONS, "profile")
    sec = {k: _table(data.get(k, {}), k) for k in _SECTIONS - {"stock"}}
    job = JobProfile(
        machine=_machine(sec["machine"]),
        wire=_wire(sec["wire"]),
        foam=_foam(sec["foam"]),
        stock=_stock(data["stock"]) if "stock" in data else JobProfile().stock,
        tolerance=_tolerance(sec["tolerance"]),
        pieces=_pieces(sec["pieces"]),
        mold=_mold(sec["mold"]),
        source=source,
    )
    if job.usable_width_mm < job.pieces.min_width_mm:
        raise ProfileError(
            f"machine.span_mm - 2 * pieces.face_to_tower_mm = {job.usable_width_mm:g} mm leaves no "
            f"room for a piece of pieces.min_width_mm = {job.pieces.min_width_mm:g} mm"
        )
    return job


def load_job(path: str | Path | None) -> JobProfile:
    """Load and validate a job profile from a TOML file; ``None`` gives the bundled default."""
    if path is None:
        return default_job()
    p = Path(path)
    if p.is_dir():
        raise ProfileError(f"job profile {p} is a folder, not a TOML file")
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ProfileError(f"job profile {p} does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ProfileError(f"job profile {p} cannot be read: {exc.__class__.__name__}") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"job profile {p} is not valid TOML: {exc}") from None
    return parse_job(data, source=str(p))


def default_job() -> JobProfile:
    """The bundled default profile (wirecut/data/default_job.toml)."""
    text = resources.files("wirecut.data").joinpath("default_job.toml").read_text("utf-8")
    return parse_job(tomllib.loads(text), source="built-in default")
