"""firmware/ type-checks with pyright against the rp2 and esp32 MicroPython stub packages."""

import os
import shutil
import subprocess
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
PYRIGHT = HERE / "mp" / "node_modules" / ".bin" / "pyright"


def test_firmware_typechecks_against_board_stubs():
    if shutil.which("node") is None or not PYRIGHT.exists():
        if os.environ.get("HEATLOG_CI") == "1":
            pytest.fail("pyright missing: run `npm ci --prefix tests/firmware/mp`")
        pytest.skip("pyright (npm) not installed")
    proc = subprocess.run(
        ["bash", str(HERE / "typecheck.sh")],
        capture_output=True,
        text=True,
        timeout=900,
        check=False,
    )
    out = proc.stdout + proc.stderr
    assert proc.returncode == 0, out
    assert out.count("0 errors") == 2, out
