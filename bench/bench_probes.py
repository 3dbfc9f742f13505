"""Throughput of the vectorised probe conversions against a per-value loop measured in the same run.

Run from the repository root: ``python bench/bench_probes.py``. Prints conversions per second for
each model and direction, and the speed-up over converting the same values one by one (the
baseline; measured on fewer values and scaled per value). No assertions: figures only.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "host"))

from heatlog.probes import Beta, SteinhartHart, SteinhartHart4, pt100  # noqa: E402

N = 1_000_000
N_LOOP = 2_000


def rate(fn, values) -> float:
    start = time.perf_counter()
    fn(values)
    return values.size / (time.perf_counter() - start)


def loop_rate(fn, values) -> float:
    start = time.perf_counter()
    for v in values:
        fn(float(v))
    return values.size / (time.perf_counter() - start)


def main() -> None:
    rng = np.random.default_rng(1)
    models = {
        "steinhart-hart": SteinhartHart(1.129148e-3, 2.34125e-4, 8.76741e-8),
        "steinhart-hart-4": SteinhartHart4(1.129148e-3, 2.34125e-4, 8.76741e-8, -2e-7),
        "beta": Beta(10_000.0, 3950.0),
        "callendar-van-dusen": pt100(),
    }
    print(f"{'model':<20} {'direction':<6} {'vectorised /s':>14} {'loop /s':>10} {'ratio':>7}")
    for name, model in models.items():
        lo, hi = (-190.0, 800.0) if name == "callendar-van-dusen" else (-30.0, 120.0)
        t = rng.uniform(lo, hi, N)
        r = model.temperature_to_resistance(t)
        for label, fn, values in (
            ("R->T", model.resistance_to_temperature, r),
            ("T->R", model.temperature_to_resistance, t),
        ):
            fast = rate(fn, values)
            slow = loop_rate(fn, values[:N_LOOP])
            print(f"{name:<20} {label:<6} {fast:>14.3g} {slow:>10.3g} {fast / slow:>7.0f}")


if __name__ == "__main__":
    main()
