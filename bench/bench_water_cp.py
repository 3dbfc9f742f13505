"""Water c_p: the Chebyshev fit against direct IAPWS-95 calls, timed in the same run.

Run from the repository root: ``python bench/bench_water_cp.py``. Prints the time per call of
each and the ratio; the fit exists so a reduction does not pay IAPWS-95's cost per call.
"""

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "host"))

from heatlog.energetics.water import iapws_cp, water_cp  # noqa: E402


def per_call(func, values) -> float:
    start = time.perf_counter()
    for v in values:
        func(v)
    return (time.perf_counter() - start) / len(values)


def main() -> None:
    temps = np.linspace(1.0, 99.0, 200)
    baseline = per_call(iapws_cp, temps)
    fit = per_call(water_cp, np.tile(temps, 50))
    start = time.perf_counter()
    water_cp(np.linspace(1.0, 99.0, 100_000))
    vector = (time.perf_counter() - start) / 100_000
    worst = max(abs(water_cp(t) - iapws_cp(t)) for t in temps[::10])
    print(f"IAPWS-95 (iapws) per call : {baseline * 1e6:10.1f} µs  (baseline)")
    print(f"fit, scalar per call      : {fit * 1e6:10.2f} µs  ratio {baseline / fit:8.0f}×")
    print(f"fit, vectorised per value : {vector * 1e9:10.2f} ns  ratio {baseline / vector:8.0f}×")
    print(f"largest |fit − IAPWS-95| on 20 points: {worst:.2e} J/(g·K)")


if __name__ == "__main__":
    main()
