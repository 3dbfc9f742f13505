"""Benchmark: do the long-run corrections hold? Invented runs of three kinds (hand warmer, cold
pack, cement; heatlog.profile.acceptance) logged by a lagging probe on a clock that does not
start at 0, analysed without and with the probe's time constant.

Prints, per kind and over seeded runs: the share of 80 instants along the curve where the k = 2
band of Q(t) covers the truth (before → after), the median and largest relative error of Q, the
median |error|/U(k=2), and the peak heat rate against the truth. Then the cooling fit read on the
raw clock (what heatlog did before) against the fit counted from the segment start, and a fit
started while heat is still released (its bias now in u(G)).
Run: ``python bench/bench_longrun.py [seeds]``. Figures only; nothing here asserts.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "host"))

from heatlog.errors import HeatlogError  # noqa: E402
from heatlog.profile.acceptance import (  # noqa: E402
    CLOCK_OFFSET_S,
    KINDS,
    along_curve,
    analyse,
    coverage,
    scenario,
)
from heatlog.profile.heatloss import cooling_fit, loss_from_cooling  # noqa: E402


def _ratio(sc, result) -> float:
    idx = along_curve(sc)
    err = np.abs(result.heat.heat_J[idx] - (sc.run.true_heat_J[idx] - sc.run.true_heat_J[0]))
    return float(np.median(err / (2.0 * result.heat.u_heat_J[idx])))


def main() -> None:
    seeds = int(sys.argv[1]) if len(sys.argv) > 1 else 5
    start = time.perf_counter()
    print(f"{seeds} seeded runs per kind, {80} instants along each curve (invented data)\n")
    head = (
        f"{'kind':8} {'coverage k=2':>14} {'median |rel err|':>18} {'max |rel err|':>15} "
        f"{'median |err|/U':>16} {'peak rate (truth)':>26}"
    )
    print(head)
    for kind in KINDS:
        rows = {False: [], True: []}
        ratios = {False: [], True: []}
        peaks = []
        for seed in range(seeds):
            sc = scenario(kind, seed)
            for corrected in (False, True):
                res = analyse(sc, corrected=corrected)
                rows[corrected].append(coverage(sc, res))
                ratios[corrected].append(_ratio(sc, res))
            peaks.append((rows[True][-1].peak_rate_W, rows[True][-1].u_peak_rate_W))
        for corrected, label in ((False, "before"), (True, "after")):
            cov = np.mean([r.covered for r in rows[corrected]])
            med = np.median([r.median_rel_error for r in rows[corrected]])
            mx = np.max([r.max_rel_error for r in rows[corrected]])
            ratio = np.median(ratios[corrected])
            peak = np.mean([r.peak_rate_W for r in rows[corrected]])
            u_peak = np.mean([r.u_peak_rate_W for r in rows[corrected]])
            flagged = sum(r.peak_flagged for r in rows[corrected])
            print(
                f"{kind + ' ' + label:14} {cov:8.2f} {100 * med:17.2f} % {100 * mx:13.1f} % "
                f"{ratio:16.2f} {peak:10.4g} W, u {u_peak:.2g} W ({sc.true_peak_W:.4g})"
                + (f", flagged unresolved in {flagged}/{seeds}" if flagged else "")
            )
    print(
        "\n(before: no probe time constant; after: τ from a plunge test, u(τ) 10 %. The largest "
        "relative errors sit at the first instants, where Q is near zero.)\n"
    )
    # the cooling fit's time base
    sc = scenario("warmer", 0)
    run = sc.run
    t_raw = run.time_s + CLOCK_OFFSET_S
    after = sc.settings.cooling_fit_after_s
    true_q = run.true_heat_J[-1] - run.true_heat_J[0]
    c = sc.settings.heat_capacity
    x_all = run.temp_C - run.env_C

    def q_with(g: float) -> float:
        return c.value * (run.temp_C[-1] - run.temp_C[0]) + g * float(
            np.trapezoid(x_all, run.time_s)
        )

    # before: SECONDS compared with the raw clock, a plain least-squares fit, statistical u only
    sel = t_raw >= after
    ts, ys, es = t_raw[sel], run.temp_C[sel], run.env_C[sel]
    integ = np.concatenate(([0.0], np.cumsum(0.5 * np.diff(ts) * ((ys - es)[1:] + (ys - es)[:-1]))))
    design = np.column_stack([np.ones_like(integ), -integ])
    beta, *_ = np.linalg.lstsq(design, ys, rcond=None)
    resid = ys - design @ beta
    g_old = float(beta[1]) * c.value
    print(
        f"cooling fit from {after:g} s, before (raw clock, from the log's first sample): "
        f"G = {g_old:.4g} W/K (truth 0.06), Q error {100 * (q_with(g_old) / true_q - 1):+.1f} %, "
        f"residual rms {float(np.sqrt(np.mean(resid**2))):.2g} K, no warning"
    )
    try:
        cooling_fit(t_raw, run.temp_C, run.env_C, start_s=after, origin_s=t_raw[0])
    except HeatlogError as exc:
        print(f"  the same start on the raw clock now: refused — {exc}")
    fit = cooling_fit(t_raw, run.temp_C, run.env_C, start_s=t_raw[0] + after, origin_s=t_raw[0])
    g = loss_from_cooling(fit, c)
    print(
        f"  now, counted from the segment start: G = {g.G_W_per_K:.4g} W/K, u = "
        f"{g.u_G_W_per_K:.2g} W/K (k=1; release bias {fit.u_release_per_s * c.value:.2g} W/K), "
        f"Q error {100 * (q_with(g.G_W_per_K) / true_q - 1):+.2f} % against "
        f"U(k=2) of G alone {200 * g.u_G_W_per_K / g.G_W_per_K:.2f} %; residual rms "
        f"{fit.residual_K:.2g} K = {fit.residual_ratio:.2g}× the noise"
    )
    # a fit started while heat is still released (release decaying over 400 s, fit 30 min after
    # the plateau): k is biased; before, u(k) was the fit's statistics alone
    from heatlog.gum import Input
    from heatlog.profile.synthetic import PlateauDecay, long_run

    late = long_run(
        PlateauDecay(1.5, 4 * 3600.0, 400.0), duration_s=7 * 3600.0, dt_s=10.0,
        heat_capacity_J_per_K=60.0, loss_W_per_K=0.06, env_C=20.0, noise_K=0.005, seed=2,
    )  # fmt: skip
    fit = cooling_fit(late.time_s, late.temp_C, late.env_C, start_s=4.5 * 3600.0)
    c60 = Input(60.0, 0.0, "J/K")
    g = loss_from_cooling(fit, c60)
    err = 100 * (g.G_W_per_K / 0.06 - 1)
    print(
        f"\ncooling fit while heat is still released: G error {err:+.2f} %; U(k=2) of G before "
        f"(statistics only) {200 * fit.u_rate_per_s / fit.rate_per_s:.2f} %, now "
        f"{200 * g.u_G_W_per_K / g.G_W_per_K:.2f} % with the release bias; warnings: "
        f"{len(fit.warnings)}"
    )
    print(f"\nwall time {time.perf_counter() - start:.1f} s")


if __name__ == "__main__":
    main()
