"""Job profile: the interface's keys load; bad keys, types and values are refused by name."""

from __future__ import annotations

import dataclasses

import pytest

from wirecut.config import Dialect, Policy, default_job, load_job, parse_job
from wirecut.errors import ProfileError, WirecutError

INTERFACE_PROFILE = """
[machine]
span_mm = 1600
travel_x_mm = [0.0, 1200.0]
travel_y_mm = [0.0, 800.0]
max_axis_speed_mm_s = 25.0
dialect = "xyuv-inverse-time"

[wire]
cut_speed_mm_s = 4.0
kerf_base_mm = 0.9
kerf_speed_coeff_mm2_s = 1.2
lag_ref_mm = 2.0
lag_ref_speed_mm_s = 4.0
lag_relax_s = 1.5

[foam]
density_kg_m3 = 20.0

[[stock]]
name = "long"
size_mm = [4000.0, 1200.0, 1000.0]
count = 20

[tolerance]
surface_mm = 0.5
policy = "balanced"

[pieces]
min_width_mm = 100.0
face_to_tower_mm = 100.0

[mold]
side = "below"
base_mm = 60.0
up = [0.0, 0.0, 1.0]
"""


def test_interface_example_loads(tmp_path):
    # the example profile of the outside contract (shared/interface.md) is valid as written
    p = tmp_path / "job.toml"
    p.write_text(INTERFACE_PROFILE)
    job = load_job(p)
    assert job.machine.span_mm == 1600.0
    assert job.machine.travel_x_mm == (0.0, 1200.0)
    assert job.machine.dialect is Dialect.XYUV_INVERSE_TIME
    assert job.tolerance.policy is Policy.BALANCED
    assert job.stock[0].size_mm == (4000.0, 1200.0, 1000.0)
    assert job.usable_width_mm == pytest.approx(1400.0)


def test_default_profile_equals_interface_values():
    job = default_job()
    assert job.wire.kerf_base_mm == 0.9
    assert job.wire.kerf_speed_coeff_mm2_s == 1.2
    assert job.mold.up == (0.0, 0.0, 1.0)
    assert dataclasses.is_dataclass(job)
    with pytest.raises(dataclasses.FrozenInstanceError):
        job.machine.span_mm = 1.0  # type: ignore[misc]


BAD = [
    ("[machine]\nspan_mm = 0\n", "machine.span_mm"),
    ("[machine]\nspan_mm = -5\n", "machine.span_mm"),
    ("[machine]\nspan_mm = 'long'\n", "machine.span_mm"),
    ("[machine]\ntravel_x_mm = [100.0, 100.0]\n", "machine.travel_x_mm"),
    ("[machine]\ntravel_y_mm = [800.0, 0.0]\n", "machine.travel_y_mm"),
    ("[machine]\ntravel_y_mm = [0.0]\n", "machine.travel_y_mm"),
    ("[machine]\nmax_axis_speed_mm_s = 0\n", "machine.max_axis_speed_mm_s"),
    ("[machine]\ndialect = 'fanuc'\n", "machine.dialect"),
    ("[machine]\nspann_mm = 1600\n", "machine.spann_mm"),
    ("[machine]\naxes = ['X', 'X', 'U', 'V']\n", "machine.axes"),
    ("[wire]\ncut_speed_mm_s = 0\n", "wire.cut_speed_mm_s"),
    ("[wire]\ncut_speed_mm_s = true\n", "wire.cut_speed_mm_s"),
    ("[wire]\nkerf_base_mm = -1\n", "wire.kerf_base_mm"),
    ("[wire]\nlag_relax_s = 0\n", "wire.lag_relax_s"),
    ("[tolerance]\nsurface_mm = 0\n", "tolerance.surface_mm"),
    ("[tolerance]\nsurface_mm = -0.5\n", "tolerance.surface_mm"),
    ("[tolerance]\nsurface_mm = nan\n", "tolerance.surface_mm"),
    ("[tolerance]\npolicy = 'tight'\n", "tolerance.policy"),
    ("[mold]\nside = 'left'\n", "mold.side"),
    ("[mold]\nup = [0, 0, 0]\n", "mold.up"),
    ("[foam]\ndensity = 20\n", "foam.density"),
    ("[[stock]]\nname = 'a'\nsize_mm = [1, 2]\ncount = 1\n", "stock[0].size_mm"),
    ("[[stock]]\nname = 'a'\nsize_mm = [1, 2, 3]\ncount = 0\n", "stock[0].count"),
    ("[[stock]]\nname = 'a) G0 X-9 ('\nsize_mm = [1, 2, 3]\ncount = 1\n", "stock[0].name"),
    ("[[stock]]\nsize_mm = [1, 2, 3]\ncount = 1\n", "stock[0].name"),
    ("[extra]\nx = 1\n", "profile.extra"),
    ("[pieces]\nface_to_tower_mm = 900\n", "pieces.min_width_mm"),
]


@pytest.mark.parametrize("text, key", BAD)
def test_bad_profiles_name_the_key(tmp_path, text, key):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(ProfileError) as info:
        load_job(p)
    msg = str(info.value)
    assert key in msg
    assert "\n" not in msg


def test_enum_error_lists_choices():
    with pytest.raises(ProfileError, match="'balanced', 'no-gouge'"):
        parse_job({"tolerance": {"policy": "tight"}})


@pytest.mark.parametrize("text", ["[machine\nspan_mm = 1", "span_mm = = 3", "\x00\x01"])
def test_malformed_toml(tmp_path, text):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(ProfileError, match="not valid TOML"):
        load_job(p)


def test_missing_and_folder(tmp_path):
    with pytest.raises(ProfileError, match="does not exist"):
        load_job(tmp_path / "nope.toml")
    with pytest.raises(ProfileError, match="is a folder"):
        load_job(tmp_path)


def test_errors_share_one_root():
    assert issubclass(ProfileError, WirecutError)
    assert issubclass(ProfileError, ValueError)


def test_with_tolerance():
    job = default_job().with_tolerance(0.2)
    assert job.tolerance.surface_mm == 0.2
    with pytest.raises(ProfileError):
        default_job().with_tolerance(0.0)


def test_drivable_slope_by_hand():
    from wirecut.config import MachineSpec

    m = MachineSpec()  # travel x 0-1200, clearance 30, span 1600
    # (1200 - 740 - 2 x 30) / 1600 = 0.25 (by hand)
    assert m.drivable_slope(740.0) == pytest.approx(0.25)
    assert m.drivable_slope(1200.0) == 0.0  # no room beside the blank
    assert m.drivable_slope(-1e6) == 1.0  # capped at 45 degrees
