"""All-or-nothing output folders: success replaces, failure and interruption leave the old."""

from __future__ import annotations

import pytest

from wirecut.errors import OutputError
from wirecut.export.safe_output import (
    atomic_write_text,
    check_output_dir,
    output_dir,
    safe_file_name,
)


def test_success_creates_then_replaces(tmp_path):
    out = tmp_path / "out"
    with output_dir(out) as tmp:
        (tmp / "a.txt").write_text("first")
    assert (out / "a.txt").read_text() == "first"
    with output_dir(out) as tmp:
        (tmp / "b.txt").write_text("second")
    # a re-run replaces the earlier output cleanly: no file of the first run survives
    assert sorted(p.name for p in out.iterdir()) == ["b.txt"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


@pytest.mark.parametrize("exc", [RuntimeError("boom"), KeyboardInterrupt()])
def test_failure_or_interrupt_keeps_previous(tmp_path, exc):
    out = tmp_path / "out"
    with output_dir(out) as tmp:
        (tmp / "keep.txt").write_text("old")
    with pytest.raises(type(exc)):
        with output_dir(out) as tmp:
            (tmp / "half.txt").write_text("half-written")
            raise exc
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]
    assert (out / "keep.txt").read_text() == "old"
    # the temporary folder is gone too
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_refuses_file_and_file_parent(tmp_path):
    f = tmp_path / "f"
    f.write_text("x")
    with pytest.raises(OutputError, match="is a file"):
        check_output_dir(f)
    with pytest.raises(OutputError, match="is a file"):
        check_output_dir(f / "sub")


def test_atomic_write_text(tmp_path):
    p = atomic_write_text(tmp_path / "x.json", "{}\n")
    assert p.read_text() == "{}\n"
    with pytest.raises(OutputError):
        atomic_write_text(tmp_path, "no")
    with pytest.raises(OutputError):
        atomic_write_text(tmp_path / "missing" / "x.json", "no")


@pytest.mark.parametrize(
    "name, safe",
    [("P01", "P01"), ("../../etc/passwd", "_.._etc_passwd"), ("a b;c", "a_b_c"), ("", "unnamed")],
)
def test_safe_file_name(name, safe):
    assert safe_file_name(name) == safe
    assert "/" not in safe_file_name(name)
