"""Shared fixtures: the independent RS274/NGC interpreter of Debian's linuxcnc-uspace."""

import json
import os
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DRIVER = Path(__file__).parent / "gcode" / "linuxcnc_driver.py"
SYSTEM_PYTHON = Path("/usr/bin/python3")
POS_TOL_MM = 0.001  # brief: every reported position within 0.001 mm of the writer's
XYUV_COLUMNS = [0, 1, 6, 7]  # interpreter order X Y Z A B C U V W (canon straight_feed)


def _cache() -> Path:
    return Path(os.environ.get("WIRECUT_LINUXCNC_CACHE", REPO / ".cache" / "linuxcnc"))


def _module_present(cache: Path) -> bool:
    return any((cache / "usr/lib/python3/dist-packages").glob("gcode*.so"))


@pytest.fixture(scope="session")
def interpreter():
    """A function running the interpreter on a program text; skips if it cannot be had."""
    cache = _cache()
    if not SYSTEM_PYTHON.exists():
        reason = f"{SYSTEM_PYTHON} is missing: the linuxcnc gcode module is built for it"
        print(reason)
        pytest.skip(reason)
    fetch_log = ""
    if not _module_present(cache):
        script = REPO / ".ci" / "linuxcnc.sh"
        done = subprocess.run(
            ["bash", str(script), str(cache)], capture_output=True, text=True, timeout=300
        )
        fetch_log = (done.stdout + done.stderr).strip()
    if not _module_present(cache):
        reason = f"linuxcnc-uspace could not be fetched into {cache}: {fetch_log}"
        print(reason)
        pytest.skip(reason)
    env = dict(os.environ)
    env["LD_LIBRARY_PATH"] = f"{cache}/usr/lib:{cache}/usr/lib/x86_64-linux-gnu"
    env.pop("PYTHONPATH", None)
    env.pop("PYTHONHOME", None)
    counter = iter(range(10**6))

    def run(text: str, tmp: Path, axes: str = "XYUV") -> dict:
        path = tmp / f"program{next(counter)}.ngc"
        path.write_text(text, encoding="ascii")
        done = subprocess.run(
            [str(SYSTEM_PYTHON), str(DRIVER), str(cache), str(path), axes],
            capture_output=True,
            text=True,
            env=env,
            timeout=120,
        )
        assert done.returncode == 0, done.stderr
        return json.loads(done.stdout)

    return run
