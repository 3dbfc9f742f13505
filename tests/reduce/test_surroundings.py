"""A moving surroundings temperature, short baselines and long reactions (invented data).

Runs come from ``room_run`` / ``synthetic_run`` with a drifting room (reduce/synthetic.py); the
truth is the generator's adiabatic change of a vessel under Newtonian exchange with the room
(docs/REFERENCES.md: ISO1928). Where a test compares with and without the ambient column, the
drifting room is the only difference.
"""

import json

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.integrate import solve_ivp

from heatlog.cli import main
from heatlog.errors import ReductionError
from heatlog.reduce import reduce_thermogram
from heatlog.reduce.periods import (
    MIN_PERIOD_POINTS,
    MIN_PERIOD_S,
    baseline_needed_s,
    period_shortfall,
)
from heatlog.reduce.surroundings import env_response
from heatlog.reduce.synthetic import Release, room_run, synthetic_run
from heatlog.thermogram import Thermogram


def _drifting(seed=3, log_env=True, fore=150.0, tau=90.0, drift_K_per_h=1.5, k=1e-3, dt=2.0):
    return synthetic_run(
        releases=(Release(fore, 3.0, tau),),
        duration_s=fore + 5 * tau + 420.0,
        dt_s=dt,
        k_per_s=k,
        jacket_C=22.0,
        start_C=21.0,
        noise_K=0.003,
        probe_lag_s=2.0,
        seed=seed,
        room_drift_K_per_s=drift_K_per_h / 3600.0,
        log_env=log_env,
        env_lag_s=30.0,
        env_noise_K=0.01,
    )


def test_env_response_matches_an_ode_solution():
    # w' = k(e − w) for a room that ramps and swings; scipy's Radau at tight tolerance
    t = np.linspace(0.0, 2000.0, 801)
    e = 0.0004 * t + 0.3 * np.sin(t / 300.0)
    k = 8e-4
    w = env_response(t, e, k)
    ref = solve_ivp(
        lambda s, x: [k * (np.interp(s, t, e) - x[0])],
        (0.0, 2000.0),
        [0.0],
        t_eval=t,
        method="Radau",
        rtol=1e-10,
        atol=1e-12,
        max_step=1.0,
    )
    np.testing.assert_allclose(w, ref.y[0], atol=2e-6)
    # a non-uniform time base takes the loop; exact for a ramp however it is sampled
    idx = np.sort(np.r_[0, 800, np.random.default_rng(1).choice(np.arange(1, 800), 300, False)])
    ramp = 0.0004 * t
    np.testing.assert_allclose(
        env_response(t[idx], ramp[idx], k), env_response(t, ramp, k)[idx], atol=1e-12
    )


def test_measured_surroundings_remove_the_room_drift_bias():
    run = _drifting()
    truth = run.truth.delta_t_K[0]
    with_env = reduce_thermogram(run.thermogram, env_channel="env_C")
    assert abs(with_env.delta_t_K - truth) <= with_env.U_delta_t_K
    names = [c.name for c in with_env.budget.components]
    for row in (
        "surroundings term: k in T_env",
        "surroundings probe noise",
        "surroundings probe lag",
    ):
        assert row in names
    assert "surroundings measured (env_C)" in with_env.drift_reason
    # the exchange constant found against the logged room is the generator's (within 10 %)
    assert with_env.k_per_s == pytest.approx(run.truth.k_per_s, rel=0.1)
    # without the column the same run is worse off (steady-room assumption)
    blind = reduce_thermogram(run.thermogram)
    assert abs(blind.delta_t_K - truth) > abs(with_env.delta_t_K - truth)


def test_without_the_column_a_drifting_room_is_fitted_or_budgeted():
    # a room drifting 1.5 K/h and a long after-period: the fore/after drifts disagree with a
    # steady room; the result is then either the drifting-room model or carries the spread
    run = _drifting(log_env=False, drift_K_per_h=1.5, tau=40.0, fore=240.0)
    red = reduce_thermogram(run.thermogram)
    names = [c.name for c in red.budget.components]
    assert "drifting room" in red.drift_reason or "steady-room assumption" in names
    assert abs(red.delta_t_K - run.truth.delta_t_K[0]) <= red.U_delta_t_K


def test_steady_room_keeps_the_steady_model():
    run = synthetic_run(
        releases=(Release(400.0, 2.0, 20.0),), duration_s=1800.0, noise_K=0.002, seed=4
    )
    red = reduce_thermogram(run.thermogram)
    assert "drifting room" not in red.drift_reason
    assert "steady-room assumption" not in [c.name for c in red.budget.components]


def test_missing_or_absurd_env_channel_is_one_clear_error():
    run = _drifting()
    with pytest.raises(ReductionError, match="no surroundings column 'room'"):
        reduce_thermogram(run.thermogram, env_channel="room")
    th = run.thermogram
    bad = dict(th.channels)
    bad["env_C"] = bad["env_C"].copy()
    bad["env_C"][10] = 1e6
    with pytest.raises(ReductionError, match="implausible"):
        reduce_thermogram(Thermogram(th.time_s, th.temp_C, bad), env_channel="env_C")


def _csv(tmp_path, run, env=True):
    th = run.thermogram
    head = "time_s,temp_C" + (",env_C" if env else "")
    rows = [
        f"{t:.3f},{y:.6f}" + (f",{e:.4f}" if env else "")
        for t, y, e in zip(th.time_s, th.temp_C, th.channels.get("env_C", th.temp_C), strict=True)
    ]
    p = tmp_path / "room.csv"
    p.write_text("# invented data\n" + head + "\n" + "\n".join(rows) + "\n")
    return p


def test_cli_env_col_and_run_file(tmp_path):
    run = _drifting()
    p = _csv(tmp_path, run)
    r = CliRunner().invoke(main, ["reduce", str(p), "--env-col", "env_C", "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert "surroundings measured" in d["drift"]["reason"]
    assert abs(d["delta_t_K"] - run.truth.delta_t_K[0]) <= d["U_delta_t_K"]
    toml = tmp_path / "run.toml"
    toml.write_text(f'title = "invented"\n[log]\nfile = "{p.name}"\nenv_col = "env_C"\n')
    r2 = CliRunner().invoke(main, ["reduce", str(toml), "--json"])
    assert r2.exit_code == 0, r2.output
    assert json.loads(r2.output)["delta_t_K"] == pytest.approx(d["delta_t_K"], abs=1e-9)
    # a column that is not there: one line, non-zero
    r3 = CliRunner().invoke(main, ["reduce", str(p), "--env-col", "ambient"])
    assert r3.exit_code != 0 and r3.output.startswith("Error: ")
    assert r3.output.count("\n") == 1


@pytest.mark.parametrize("seed", range(6))
def test_mutated_env_column_is_refused_or_reduced(tmp_path, seed):
    # seeded damage to the ambient column: text, empty, NaN, huge, a deleted cell
    rng = np.random.default_rng(seed)
    run = _drifting(seed=seed)
    lines = _csv(tmp_path, run).read_text().splitlines()
    i = int(rng.integers(3, len(lines)))
    cells = lines[i].split(",")
    cells[2] = ["warm", "", "nan", "1e308", "-1e300", None][seed] or ""
    lines[i] = ",".join(cells) if seed != 5 else ",".join(cells[:2])
    p = tmp_path / "bad.csv"
    p.write_text("\n".join(lines) + "\n")
    r = CliRunner().invoke(main, ["reduce", str(p), "--env-col", "env_C", "--json"])
    assert "Traceback" not in r.output
    d = json.loads(r.output)  # one JSON object either way
    if r.exit_code != 0:  # a refusal, one line
        assert d["error"] and d["kind"] and "\n" not in d["error"]
    else:  # or the damaged reading left out and flagged by the input gate
        assert any("env_C" in f["message"] for f in d["findings"]), d["findings"]


def test_period_rule_messages_and_guide_bound():
    t = np.arange(0.0, 600.0, 5.0)
    assert period_shortfall(t, 0.0, 100.0, "fore-period") is None
    msg = period_shortfall(t, 0.0, 25.0, "fore-period")
    assert f"at least {MIN_PERIOD_S:.0f} s and {MIN_PERIOD_POINTS} readings" in msg
    empty = period_shortfall(t, 300.0, 280.0, "after-period")
    assert "no after-period" in empty and "-" not in empty.replace("after-period", "")
    # the guide's baseline is enough for the reduction at any sampling step
    for h in (0.5, 2.0, 5.0, 10.0):
        need = baseline_needed_s(h)
        run = synthetic_run(
            releases=(Release(need, 2.0, 30.0),),
            duration_s=need + 900.0,
            dt_s=h,
            noise_K=0.003,
            probe_lag_s=3.0,
            seed=int(h * 10),
        )
        red = reduce_thermogram(run.thermogram)
        assert red.event_start_s - red.fore_start_s >= MIN_PERIOD_S


def test_two_minute_baseline_and_long_reaction_are_reduced_with_a_larger_u():
    # 120 s of baseline at 5 s sampling, a ten-minute reaction: accepted, noted, covered
    short = room_run(11, fore_s=(120.0, 120.0))
    red = reduce_thermogram(short.thermogram, env_channel="env_C")
    assert abs(red.delta_t_K - short.truth.delta_t_K[0]) <= red.U_delta_t_K
    assert any("short fore-period" in n for n in red.notes)
    long_fore = room_run(11, fore_s=(600.0, 600.0))
    red_long = reduce_thermogram(long_fore.thermogram, env_channel="env_C")
    assert red.u_delta_t_K > red_long.u_delta_t_K


def test_log_ending_in_a_slow_tail_starts_the_after_period_earlier_and_says_so():
    run = synthetic_run(
        releases=(Release(300.0, 4.0, 150.0),),
        duration_s=300.0 + 1000.0,
        dt_s=2.0,
        k_per_s=5e-4,
        noise_K=0.002,
        seed=9,
    )
    red = reduce_thermogram(run.thermogram)
    tail = [c for c in red.budget.components if c.name == "release after the after-period start"]
    assert red.method == "newton" or tail
    assert abs(red.delta_t_K - 4.0) <= red.U_delta_t_K
