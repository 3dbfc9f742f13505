"""Benchmark: what a user waits for, as whole processes, against baselines timed in the same run.

1. ``heatlog --version`` against ``python -c pass`` (target: within 0.15 s).
2. ``heatlog reduce`` on an invented 1,000,000-row run, end to end, against a fresh
   ``python -c "import numpy; numpy.loadtxt(...)"`` process on the same file (target: ≤ 1.5×).

Every figure is the best of interleaved repeats (each process is started anew, turn by turn, so
machine load hits baseline and command alike), after one untimed run of each that writes the
bytecode, as pip does at install time (``PYTHONDONTWRITEBYTECODE`` is lifted for the run); the
ratio of the medians is printed beside it, since on a shared machine single runs scatter widely.
Run: ``python bench/bench_startup.py [rows] [repeats]``. The command is run as the installed
``heatlog`` script runs it (``ENTRY``, the launcher pip writes for ``[project.scripts]``: no
``runpy`` as under ``python -m``), with this checkout's ``host/`` first on PYTHONPATH.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HOST = Path(__file__).resolve().parents[1] / "host"
sys.path.insert(0, str(HOST))

from bench_reduce import write_run  # noqa: E402  (the same invented run file)

#: What pip's generated ``heatlog`` launcher does (``[project.scripts] heatlog = heatlog.cli:run``).
ENTRY = (
    "import re, sys; from heatlog.cli import run; "
    "sys.argv[0] = re.sub(r'(-script\\.pyw|\\.exe)?$', '', sys.argv[0]); sys.exit(run())"
)

#: Compiled bytecode for every process of the run (a temporary folder, so the checkout stays
#: clean). An installed heatlog, like numpy, is compiled by pip at install time; a process that
#: compiled heatlog's modules from source on every start would measure something no user waits for.
PYCACHE = tempfile.TemporaryDirectory(prefix="heatlog-bench-pycache-")


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(HOST) + os.pathsep + env.get("PYTHONPATH", "")
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    env["PYTHONPYCACHEPREFIX"] = PYCACHE.name
    return env


def _child_cpu_s() -> float:
    """CPU time (user + system) used by finished child processes; NaN where not available."""
    try:
        import resource
    except ImportError:  # Windows
        return float("nan")
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


CPU: dict[int, float] = {}  # command index → best CPU seconds of the last interleaved_best call


MEDIAN: dict[int, float] = {}  # command index → median wall seconds of the last call


def interleaved_best(commands: list[list[str]], repeats: int) -> list[float]:
    """Best wall time of each command, each started as a new process, run in turn. The best CPU
    time of each goes to ``CPU`` (on a loaded machine it says more than the wall time), the
    median wall time to ``MEDIAN``."""
    env = _env()
    best = [float("inf")] * len(commands)
    walls: list[list[float]] = [[] for _ in commands]
    CPU.clear()
    for cmd in commands:  # once untimed: bytecode written, files in the page cache
        subprocess.run(cmd, env=env, check=True, stdout=subprocess.DEVNULL)
    for _ in range(repeats):
        for i, cmd in enumerate(commands):
            cpu0 = _child_cpu_s()
            start = time.perf_counter()
            subprocess.run(cmd, env=env, check=True, stdout=subprocess.DEVNULL)
            walls[i].append(time.perf_counter() - start)
            best[i] = min(best[i], walls[i][-1])
            CPU[i] = min(CPU.get(i, float("inf")), _child_cpu_s() - cpu0)
    for i, w in enumerate(walls):
        MEDIAN[i] = sorted(w)[len(w) // 2]
    return best


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    py = sys.executable
    pass_s, version_s = interleaved_best(
        [[py, "-c", "pass"], [py, "-c", ENTRY, "--version"]], repeats
    )
    print(f"python -c pass:          {pass_s:.3f} s")
    print(f"heatlog --version:       {version_s:.3f} s")
    print(f"difference: {version_s - pass_s:+.3f} s (target <= 0.15 s)")
    print(f"  CPU time: {CPU[0]:.3f} s vs {CPU[1]:.3f} s, difference {CPU[1] - CPU[0]:+.3f} s")

    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "run.csv"
        write_run(path, rows)
        loadtxt = f"import numpy; numpy.loadtxt({str(path)!r}, delimiter=',', skiprows=1)"
        base_s, reduce_s = interleaved_best(
            [[py, "-c", loadtxt], [py, "-c", ENTRY, "reduce", str(path)]], repeats
        )
    print(f"rows: {rows}")
    print(f"fresh numpy.loadtxt process:  {base_s:.3f} s")
    print(f"heatlog reduce (end to end):  {reduce_s:.3f} s")
    print(f"ratio: {reduce_s / base_s:.2f} (target <= 1.5)")
    base_med, reduce_med = MEDIAN[0], MEDIAN[1]
    print(
        f"  median of {repeats}: {base_med:.3f} s vs {reduce_med:.3f} s, ratio {reduce_med / base_med:.2f}"
    )
    print(f"  CPU time: {CPU[0]:.3f} s vs {CPU[1]:.3f} s, ratio {CPU[1] / CPU[0]:.2f}")
    print(f"  machine load (1 min): {os.getloadavg()[0]:.1f}" if hasattr(os, "getloadavg") else "")


if __name__ == "__main__":
    main()
