"""The portable checks under the real MicroPython interpreter (WebAssembly port, run by Node.js).

Needs `npm ci --prefix tests/firmware/mp`. Skips when node or the npm package is missing, except
with HEATLOG_CI=1, where it fails: CI must prove the firmware runs under MicroPython.
"""

import os
import shutil
import subprocess
from pathlib import Path

import portable_checks
import pytest

MP = Path(__file__).resolve().parent / "mp"
PKG = MP / "node_modules" / "@micropython" / "micropython-webassembly-pyscript"


def _need(ok: bool, why: str) -> None:
    if ok:
        return
    if os.environ.get("HEATLOG_CI") == "1":
        pytest.fail(f"{why} (HEATLOG_CI=1: run `npm ci --prefix tests/firmware/mp`)")
    pytest.skip(why)


def test_portable_checks_under_micropython():
    node = shutil.which("node")
    _need(node is not None, "node is not installed")
    _need(
        PKG.is_dir(), "npm package @micropython/micropython-webassembly-pyscript is not installed"
    )
    proc = subprocess.run(
        [node, str(MP / "run.mjs")], capture_output=True, text=True, timeout=600, check=False
    )
    output = proc.stdout + proc.stderr
    if proc.returncode != 0:
        pytest.fail("MicroPython run failed:\n" + output)
    lines = output.strip().splitlines()
    assert lines[0].startswith("interpreter: micropython"), output
    assert lines[-1] == f"{len(portable_checks.CHECKS)} passed, 0 failed", output
