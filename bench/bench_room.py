"""Cup runs in an ordinary room: acceptance, median error and k = 2 coverage (invented data).

Run from the repository root: ``python bench/bench_room.py [N]`` (default N = 200). Runs come
from ``heatlog.reduce.synthetic.room_run``: the room drifts by up to ±1.5 K/h, logged as
``env_C`` by a second probe with its own lag (5–120 s) and noise; reactions last up to about ten
minutes; two to four minutes of baseline; sampling 0.5–5 s. Printed for each set: runs refused,
median and 95th-percentile |error| relative to the true rise, k = 2 coverage (fraction of runs
whose U(k=2) covers the true rise; JCGM 100:2008 6.2, about 95 % expected) and the median
U/|error|. Sets: with the ambient column; the same runs without it; two-minute baselines with
the column; and, as the baseline measured in the same run, the steady-room sweep of the
acceptance tests (``random_run``). No assertions: figures only.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "host"))

from heatlog.errors import HeatlogError  # noqa: E402
from heatlog.reduce import reduce_thermogram  # noqa: E402
from heatlog.reduce.synthetic import random_run, room_run  # noqa: E402


def sweep(label: str, runs, env: bool) -> None:
    start = time.perf_counter()
    rel, covered, ratio, refused = [], [], [], []
    n = 0
    for seed, run in runs:
        n += 1
        truth = run.truth.delta_t_K[0]
        try:
            red = reduce_thermogram(run.thermogram, env_channel="env_C" if env else None)
        except HeatlogError as exc:
            refused.append((seed, str(exc)))
            continue
        err = abs(red.delta_t_K - truth)
        rel.append(err / abs(truth))
        covered.append(err <= red.U_delta_t_K)
        ratio.append(red.U_delta_t_K / max(err, 1e-12))
    took = time.perf_counter() - start
    rel_a = np.array(rel) * 100
    print(
        f"{label:44s} runs {n:4d}  refused {len(refused):3d}  median |err| {np.median(rel_a):.3f} %"
        f"  p95 {np.percentile(rel_a, 95):.3f} %  k=2 coverage {np.mean(covered) * 100:5.1f} %"
        f"  median U/|err| {np.median(ratio):5.1f}  ({took / max(n, 1) * 1e3:.0f} ms/run)"
    )
    for seed, why in refused[:5]:
        print(f"    refused seed {seed}: {why}")


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    seeds = range(n)
    sweep("room drifting, env_C logged", ((s, room_run(s)) for s in seeds), True)
    sweep(
        "room drifting, no ambient column", ((s, room_run(s, log_env=False)) for s in seeds), False
    )
    sweep(
        "two-minute baselines, env_C logged",
        ((s, room_run(s, fore_s=(120.0, 125.0))) for s in range(10_000, 10_000 + n)),
        True,
    )
    sweep(
        "steady room (acceptance sweep, baseline)", ((s, random_run(s)) for s in range(120)), False
    )


if __name__ == "__main__":
    main()
