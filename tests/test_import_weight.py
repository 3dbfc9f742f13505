"""What ``heatlog reduce`` imports on the CSV path (a structural check, not a timing): pandas and
any part of scipy (scipy.optimize alone costs about 0.4 s, scipy.ndimage and scipy.signal a
quarter to half a second each) would cost more than the whole reduction of a million-row log,
which should take about as long as reading the file; none is needed there. Nor is numpy.ma,
which numpy.median and numpy.unique import on first use (heatlog.orderstats stands in), nor the
few milliseconds each of numpy.polynomial (Savitzky–Golay edges use numpy.polyfit), difflib
(only a misspelt run-file key needs it) and pathlib (the CSV reader opens paths as strings).

Each case runs ``python -X importtime -m heatlog reduce FILE`` in a fresh interpreter with this
checkout's ``host/`` first on the path and reads the imported module names from its report.
"""

import os
import subprocess
import sys
from pathlib import Path

import pytest

from heatlog.csvtable import _HEAD_CHARS
from heatlog.reduce.synthetic import Release, synthetic_run

HOST = Path(__file__).resolve().parents[1] / "host"
#: Packages the CSV reduce path must not import (the module or any of its submodules).
FORBIDDEN = ("pandas", "scipy", "numpy.ma", "numpy.polynomial", "difflib", "pathlib")


def _write(path, env):
    """An invented cup run (one event, a drifting room when ``env``) as a headed CSV, 7200
    rows: past the head that csvtable decodes itself, so the long-file reader is the one run."""
    run = synthetic_run(
        releases=(Release(150.0, 3.0, 40.0),),
        duration_s=900.0,
        dt_s=0.125,
        k_per_s=1e-3,
        jacket_C=22.0,
        start_C=21.0,
        noise_K=0.003,
        probe_lag_s=2.0,
        seed=4,
        room_drift_K_per_s=(1.5 / 3600.0) if env else 0.0,
        log_env=env,
        env_lag_s=30.0,
        env_noise_K=0.01,
    )
    th = run.thermogram
    columns = [th.time_s, th.temp_C] + ([th.channels["env_C"]] if env else [])
    head = "time_s,temp_C" + (",env_C" if env else "")
    rows = (",".join(f"{v:.6f}" for v in row) for row in zip(*columns, strict=True))
    path.write_text("# invented data\n" + head + "\n" + "\n".join(rows) + "\n")
    return path


def _imported(args):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(HOST) + os.pathsep + env.get("PYTHONPATH", "")
    done = subprocess.run(
        [sys.executable, "-X", "importtime", "-m", "heatlog", *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert done.returncode == 0, done.stdout + done.stderr[-2000:]
    names = {
        line.rsplit("|", 1)[1].strip()
        for line in done.stderr.splitlines()
        if line.startswith("import time:") and line.count("|") == 2
    }
    return done.stdout, names


@pytest.mark.parametrize("env", [False, True], ids=["plain", "logged-surroundings"])
def test_csv_reduce_imports_no_pandas_and_no_scipy(tmp_path, env):
    path = _write(tmp_path / "run.csv", env)
    assert path.stat().st_size > 2 * _HEAD_CHARS  # long enough for the long-file reader
    args = ["reduce", str(path)] + (["--env-col", "env_C"] if env else [])
    out, names = _imported(args)
    assert "corrected ΔT" in out  # it did reduce the file
    assert "heatlog.csvtable" in names and "heatlog.inputgate" in names  # the report is read
    if env:
        assert "surroundings probe lag" in out  # the budget row built on the moving average
    heavy = sorted(
        n for n in names if n in FORBIDDEN or n.startswith(tuple(f + "." for f in FORBIDDEN))
    )
    assert heavy == [], heavy
