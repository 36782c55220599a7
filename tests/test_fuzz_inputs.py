"""Fuzzing with hypothesis: mesh intake and profile parsing raise only wirecut's own errors.

Whatever bytes or TOML a user hands over, the only exception that may come out is a
:class:`~wirecut.errors.WirecutError` (which the CLI turns into one line and exit code 2);
anything else would be a traceback for bad input.
"""

from __future__ import annotations

import tomllib

import numpy as np
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from wirecut.config import default_job, parse_job
from wirecut.errors import MeshError, ProfileError
from wirecut.geometry.mesh import load_target, target_from_arrays

JOB = default_job()
SUFFIXES = [".stl", ".obj", ".ply", ".off", ".glb"]

# prefixes that make the readers take the bytes seriously
HEADERS = [b"", b"solid x\n", b"ply\nformat ascii 1.0\n", b"OFF\n", b"v 0 0 0\nf 1 2 3\n",
           b"glTF", b"\0" * 80 + b"\x02\0\0\0"]  # fmt: skip


def _read_or_refuse(path) -> None:
    """A mesh file is read into a valid target or refused with a one-line MeshError."""
    try:
        target, _ = load_target(path, JOB)
    except MeshError as exc:
        assert "\n" not in str(exc)
    else:
        assert len(target.faces) > 0 and np.isfinite(target.vertices).all()


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    header=st.sampled_from(HEADERS),
    body=st.binary(max_size=400),
    suffix=st.sampled_from(SUFFIXES),
)
def test_mesh_intake_raises_only_mesh_errors(tmp_path, header, body, suffix):
    p = tmp_path / f"fuzz{suffix}"
    p.write_bytes(header + body)
    _read_or_refuse(p)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(count=st.integers(0, 6), data=st.data())
@example(count=1, data=None)
def test_binary_stl_records_raise_only_mesh_errors(tmp_path, count, data):
    # files laid out as binary STL (84 + 50 m bytes) whatever their record bytes hold: NaN,
    # infinities, repeated or collinear corners; numpy's reader sees every one of them
    body = (
        bytes(50 * count)
        if data is None
        else data.draw(st.binary(min_size=50 * count, max_size=50 * count))
    )
    p = tmp_path / "fuzz.stl"
    p.write_bytes(b"\0" * 80 + count.to_bytes(4, "little") + body)
    _read_or_refuse(p)


@settings(max_examples=60, deadline=None)
@given(
    verts=st.lists(
        st.tuples(*[st.floats(allow_nan=True, allow_infinity=True, width=32)] * 3),
        min_size=0,
        max_size=12,
    ),
    faces=st.lists(st.tuples(*[st.integers(-2, 14)] * 3), min_size=0, max_size=10),
)
def test_arrays_intake_raises_only_mesh_errors(verts, faces):
    v = np.array(verts, float).reshape(-1, 3)
    f = np.array(faces, np.int64).reshape(-1, 3)
    try:
        target, _ = target_from_arrays(v, f, JOB)
    except MeshError:
        pass
    else:
        assert target.area_mm2 > 0


SECTIONS = ["machine", "wire", "foam", "tolerance", "pieces", "mold", "stock", "extra"]
KEYS = ["span_mm", "travel_x_mm", "dialect", "cut_speed_mm_s", "kerf_base_mm",
        "surface_mm", "policy", "side", "up", "base_mm", "min_width_mm", "name", "size_mm",
        "count", "axes"]  # fmt: skip
VALUES = st.one_of(
    st.integers(-10, 10**6),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.booleans(),
    st.lists(st.floats(-1e4, 1e4), max_size=4),
    st.lists(st.text(max_size=2), max_size=5),
)


@settings(max_examples=150, deadline=None)
@given(
    st.dictionaries(
        st.sampled_from(SECTIONS),
        st.one_of(
            st.dictionaries(st.sampled_from(KEYS), VALUES, max_size=4),
            st.lists(st.dictionaries(st.sampled_from(KEYS), VALUES, max_size=4), max_size=2),
            VALUES,
        ),
        max_size=4,
    )
)
# found by this test: a scalar where a [min, max] list belongs raised a TypeError
@example({"machine": {"travel_x_mm": 0}})
@example({"machine": {"travel_y_mm": 2.5}})
@example({"mold": {"up": 1}})
def test_profile_parsing_raises_only_profile_errors(doc):
    try:
        job = parse_job(doc)
    except ProfileError as exc:
        assert "\n" not in str(exc)
    else:
        assert job.tolerance.surface_mm > 0 and job.machine.span_mm > 0


@settings(max_examples=100, deadline=None)
@given(st.text(max_size=200))
def test_any_toml_text_is_parsed_or_refused(text):
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return  # load_job turns this into a ProfileError (tests/test_config.py)
    try:
        parse_job(doc)
    except ProfileError:
        pass
