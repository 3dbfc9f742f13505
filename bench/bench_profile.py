"""Benchmark: a 1,000,000-sample long-run profile against numpy.loadtxt reading the same file.

Writes an invented cement-like run (about 11.6 days at 1 s, field air swinging ±3 K, noise
0.01 K, a status column) to a temporary folder, then times
(a) ``numpy.loadtxt`` reading the columns (the baseline, measured in the same run),
(b) the whole ``heatlog profile`` path without printing: ``read_columns`` + ``analyse_profile``
    + ``to_dict`` (JSON payload, with maturity, metrics and the 200-point series),
(c) ``analyse_profile`` alone on arrays in memory, and
(d) ``downsample_extrema`` of the series to 2000 buckets, and
(e) ``read_columns`` alone (the shared CSV gate, for where the time goes).
Prints the times, the ratio (b)/(a) and the heat error against the invented truth.
Run: ``python bench/bench_profile.py [rows]``.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "host"))

from bench_reduce import interleaved_best  # noqa: E402  (bench/ is the script's own folder)


def best_of(func) -> float:
    return interleaved_best([func])[0]


from heatlog.csvtable import read_columns  # noqa: E402
from heatlog.gum import Input  # noqa: E402
from heatlog.profile import ProfileSettings, analyse_profile, downsample_extrema  # noqa: E402
from heatlog.profile.synthetic import HydrationCurve, long_run  # noqa: E402


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    duration = float(rows - 1)

    def env(t):
        return 20.0 + 3.0 * np.sin(2.0 * np.pi * np.asarray(t) / 86400.0)

    coarse = long_run(
        HydrationCurve(),
        duration_s=duration,
        dt_s=10.0,
        heat_capacity_J_per_K=2500.0,
        loss_W_per_K=0.03,
        env_C=env,
    )
    t = np.arange(rows, dtype=float)
    rng = np.random.default_rng(1)
    temp = np.interp(t, coarse.time_s, coarse.true_temp_C) + rng.normal(0.0, 0.01, rows)
    truth = float(np.interp(t[-1], coarse.time_s, coarse.true_heat_J))
    status = np.zeros(rows)
    settings = ProfileSettings(
        heat_capacity=Input(2500.0, 25.0, "J/K"),
        loss=Input(0.03, 0.001, "W/K"),
        u_env_K=0.2,
        sample_g=Input(100.0, 0.1, "g"),
        kind="cement",
    )
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "long.csv"
        data = np.column_stack([t, temp, env(t), status])
        np.savetxt(
            path,
            data,
            delimiter=",",
            fmt=["%.0f", "%.4f", "%.4f", "%d"],
            header="time_s,temp_C,env_C,status",
            comments="",
        )
        base = best_of(lambda: np.loadtxt(path, delimiter=",", skiprows=1))
        out = {}

        def full() -> None:
            cols = read_columns(path, ["time_s", "temp_C", "env_C", "status"], what="log")
            r = analyse_profile(
                cols["time_s"], cols["temp_C"], settings, env_C=cols["env_C"], flags=cols["status"]
            )
            out["payload"] = r.to_dict()
            out["result"] = r

        ours = best_of(full)
        reading = best_of(
            lambda: read_columns(path, ["time_s", "temp_C", "env_C", "status"], what="log")
        )
    compute = best_of(
        lambda: analyse_profile(t, temp, settings, env_C=env(t), flags=status).to_dict()
    )
    down = best_of(lambda: downsample_extrema(t, temp, 2000))
    q = out["payload"]["heat_J"]
    print(f"rows: {rows} (invented cement-like run, 1 s steps, {duration / 86400:.1f} days)")
    print(f"numpy.loadtxt alone (baseline):                 {base:.3f} s")
    print(f"read_columns + analyse_profile + to_dict:       {ours:.3f} s")
    print(f"ratio (full profile / loadtxt):                 {ours / base:.2f}")
    print(f"  of which read_columns (shared CSV gate):      {reading:.3f} s")
    print(f"analyse_profile + to_dict on arrays in memory:  {compute:.3f} s")
    print(f"ratio (profile computation / loadtxt):          {compute / base:.2f}")
    print(f"downsample_extrema to 2000 buckets:             {down * 1e3:.1f} ms")
    print(
        f"Q(end) = {q:.1f} J vs invented truth {truth:.1f} J "
        f"({100 * (q - truth) / truth:+.3f} %), u = {out['payload']['u_heat_J']:.0f} J"
    )


if __name__ == "__main__":
    main()
