"""All-or-nothing output folders.

Every command that writes files writes them into a fresh temporary folder beside the target
folder and moves it into place only when the whole job succeeded. A re-run replaces the earlier
output in one rename; a failed or interrupted run leaves the previous output as it was and
removes its own temporary folder.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from wirecut.errors import OutputError

__all__ = ["check_output_dir", "output_dir", "safe_file_name", "atomic_write_text"]

_SAFE = set("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789-_.")


def safe_file_name(name: str) -> str:
    """A file-name-safe form of ``name``: letters, digits, '-', '_', '.'; never empty or hidden."""
    cleaned = "".join(c if c in _SAFE else "_" for c in str(name))[:80].lstrip(".")
    return cleaned or "unnamed"


def check_output_dir(target: str | Path) -> Path:
    """Validate an output folder path before any work is done; return it absolute.

    Raises OutputError when the path is an existing file, or its parent is not a writable folder.
    """
    out = Path(target).expanduser().absolute()
    if out.exists() and not out.is_dir():
        raise OutputError(f"output path {out} is a file, not a folder")
    parent = out.parent
    probe = parent
    while not probe.exists():
        probe = probe.parent
    if not probe.is_dir():
        raise OutputError(f"output path {out} lies under {probe}, which is a file")
    if not os.access(probe, os.W_OK | os.X_OK):
        raise OutputError(f"output folder {out} cannot be written (no permission on {probe})")
    try:  # a real probe: permissions alone do not tell (read-only mounts, /proc, root)
        os.rmdir(tempfile.mkdtemp(prefix=f".{out.name}.probe-", dir=probe))
    except OSError as exc:
        raise OutputError(
            f"output folder {out} cannot be written ({exc.strerror} in {probe})"
        ) from None
    return out


@contextmanager
def output_dir(target: str | Path) -> Iterator[Path]:
    """Yield a temporary folder to write into; on success it becomes ``target``.

    On any exception (including KeyboardInterrupt) the temporary folder is removed and
    ``target`` is left untouched.
    """
    out = check_output_dir(target)
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    except OSError as exc:
        raise OutputError(f"output folder {out} cannot be created: {exc.strerror}") from None
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = None
    try:
        if out.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{out.name}.old-", dir=out.parent))
            os.rename(out, old / "previous")
        os.rename(tmp, out)
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and (old / "previous").exists() and not out.exists():
            os.rename(old / "previous", out)
        raise OutputError(f"output folder {out} cannot be replaced: {exc.strerror}") from None
    finally:
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write ``text`` to ``path`` through a temporary file in the same folder and a rename."""
    p = Path(path).expanduser().absolute()
    if p.is_dir():
        raise OutputError(f"output path {p} is a folder, not a file")
    if not p.parent.is_dir():
        raise OutputError(f"output folder {p.parent} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.partial-", dir=p.parent)
    except OSError as exc:
        raise OutputError(f"output file {p} cannot be written: {exc.strerror}") from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return p
