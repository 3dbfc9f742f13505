"""Benchmark: reading and reducing a 1,000,000-row thermogram vs numpy.loadtxt alone.

Writes an invented synthetic run (time_s,temp_C) to a temporary folder, then times
(a) ``numpy.loadtxt`` reading the two columns (the baseline, measured in the same run) and
(b) ``read_thermogram_csv`` + ``reduce_thermogram``. Prints both and the ratio (target ≤ 1.5).
Run: ``python bench/bench_reduce.py [rows]``.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "host"))

from heatlog.reduce import reduce_thermogram  # noqa: E402
from heatlog.reduce.synthetic import Release, synthetic_run  # noqa: E402
from heatlog.thermogram import read_thermogram_csv  # noqa: E402


def interleaved_best(funcs, repeats: int = 7) -> list[float]:
    """Best time of each function, run in turn so that machine load hits both alike."""
    best = [float("inf")] * len(funcs)
    for _ in range(repeats):
        for i, func in enumerate(funcs):
            start = time.perf_counter()
            func()
            best[i] = min(best[i], time.perf_counter() - start)
    return best


def write_run(path: Path, rows: int) -> None:
    """An invented cup run of ``rows`` readings at 20 Hz (one event, probe lag, noise) as CSV."""
    dt = 0.05
    duration = (rows - 1) * dt
    run = synthetic_run(
        releases=(Release(duration * 0.3, 4.0, 30.0),),
        duration_s=duration,
        dt_s=dt,
        k_per_s=3e-4,
        probe_lag_s=3.0,
        noise_K=0.01,
        seed=1,
    )
    data = np.column_stack([run.thermogram.time_s, run.thermogram.temp_C])
    np.savetxt(path, data, delimiter=",", fmt="%.6f", header="time_s,temp_C", comments="")


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "run.csv"
        write_run(path, rows)
        result = {}

        def baseline() -> None:
            np.loadtxt(path, delimiter=",", skiprows=1)

        def full() -> None:
            result["r"] = reduce_thermogram(read_thermogram_csv(path))

        base, ours = interleaved_best([baseline, full])
    red = result["r"]
    print(f"rows: {rows}")
    print(f"numpy.loadtxt alone:                      {base:.3f} s")
    print(f"read_thermogram_csv + reduce_thermogram:  {ours:.3f} s")
    print(f"ratio: {ours / base:.2f} (target <= 1.5)")
    print(
        f"result: {red.delta_t_K:+.5f} K, u = {red.u_delta_t_K:.2g} K (true 4.00000 K), "
        f"method {red.method}"
    )


if __name__ == "__main__":
    main()
