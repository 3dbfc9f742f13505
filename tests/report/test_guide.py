"""The guided live run, fed invented runs with a known event time (reduce/synthetic.py).

The runs start with a settling transient (a probe put into the cup 3 K warm, relaxing with a
60 s time constant), so "stable" must wait for it; the release starts at a known time.
"""

import json
import math

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import InputError
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.report.guide import GuideOptions, LiveGuide, guide_stream, render_terminal

EVENT_S = 900.0
TRANSIENT_K, TRANSIENT_S = 3.0, 60.0
OPTIONS = GuideOptions(reduce_every_s=20.0)


def _run(delta_K: float, tau_s: float, seed: int, noise_K: float = 0.002, start_C: float = 21.9):
    r = synthetic_run(
        releases=(Release(EVENT_S, delta_K, tau_s),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=3e-4,
        jacket_C=22.0,
        start_C=start_C,
        noise_K=noise_K,
        resolution_K=0.001,
        probe_lag_s=3.0,
        seed=seed,
    )
    t = r.thermogram.time_s
    return t, r.thermogram.temp_C + TRANSIENT_K * np.exp(-t / TRANSIENT_S), r.truth


def _feed_until_enough(t, y, options=OPTIONS):
    g = LiveGuide(options)
    for ti, yi in zip(t, y, strict=True):
        s = g.feed(ti, yi)
        if s.enough:
            break
    return g, g.state


@pytest.mark.parametrize(
    "delta_K, tau_s, seed",
    [(2.0, 20.0, 1), (-1.5, 40.0, 2)],
    ids=["exothermic", "endothermic-slow"],
)
def test_signals_come_at_sensible_times(delta_K, tau_s, seed):
    t, y, truth = _run(delta_K, tau_s, seed)
    g, s = _feed_until_enough(t, y)
    o = OPTIONS
    # start: only once the transient's own rate (3 K/60 s · e^(−t/60 s)) is below the limit on
    # the change of the drift rate (the transient's rate is itself that change, give or take)
    settled_s = TRANSIENT_S * math.log(
        TRANSIENT_K / TRANSIENT_S * 60.0 / o.max_drift_change_K_per_min
    )
    assert s.start_signal_s is not None
    assert settled_s < s.start_signal_s < EVENT_S
    # the event is found within a few readings of its true start (plus the probe lag)
    assert s.event_s is not None and EVENT_S <= s.event_s <= EVENT_S + 30.0
    # enough: after the release has died out (its rate down to e^-5 of the start) and a full
    # after-period, but not absurdly late
    assert s.enough and s.enough_signal_s is not None
    assert s.enough_signal_s >= EVENT_S + 5 * tau_s + o.min_after_s
    assert s.enough_signal_s <= EVENT_S + 1200.0
    assert s.after_start_s is not None and s.after_start_s >= EVENT_S + 3 * tau_s
    # the running estimate against the invented truth: within 3u or 0.5 % (the transient's tail
    # in the fore-period is not Newtonian drift)
    err = abs(s.delta_t_K - truth.delta_t_K[0])
    assert err <= max(3 * s.u_delta_t_K, 0.005 * abs(truth.delta_t_K[0])), (err, s.u_delta_t_K)
    assert s.u_delta_t_K <= o.target_u_K


def test_noisy_fore_period_is_never_stable():
    t, y, _ = _run(2.0, 20.0, 3, noise_K=0.02)
    g = LiveGuide(OPTIONS)
    g.feed_many(t[t < EVENT_S], y[t < EVENT_S])
    assert g.state.phase == "settling" and g.state.start_signal_s is None
    assert "noise" in g.state.message
    assert g.state.noise_K > OPTIONS.max_noise_K


def test_steep_drift_is_never_stable():
    # 6 K below the jacket with k = 3e-4/s: about 110 mK/min of drift
    t, y, _ = _run(2.0, 20.0, 4, start_C=16.0)
    g = LiveGuide(OPTIONS)
    g.feed_many(t[t < EVENT_S], y[t < EVENT_S])
    assert g.state.start_signal_s is None
    assert abs(g.state.drift_K_per_min) > OPTIONS.max_drift_K_per_min
    assert "drift" in g.state.message


def test_stream_and_chunks_agree_with_single_feeds():
    t, y, _ = _run(2.0, 20.0, 5)
    n = int(np.searchsorted(t, EVENT_S + 60.0))
    states = list(guide_stream(zip(t[:n], y[:n], strict=True), OPTIONS))
    assert len(states) == n
    chunked = LiveGuide(OPTIONS)
    for lo in range(0, n, 37):
        chunked.feed_many(t[lo : min(lo + 37, n)], y[lo : min(lo + 37, n)])
    assert chunked.state == states[-1]
    assert [s.phase for s in states].index("stable") < [s.phase for s in states].index("event")


def test_saved_csv_is_read_by_heatlog_reduce(tmp_path):
    t, y, truth = _run(2.0, 20.0, 6)
    g, s = _feed_until_enough(t, y)
    path = tmp_path / "live.csv"
    path.write_text(g.csv_text("invented data"), encoding="utf-8")
    r = CliRunner().invoke(main, ["reduce", str(path), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)
    assert EVENT_S - 120.0 <= d["event_start_s"] <= EVENT_S  # main period opens before onset
    kept = g.csv_text(keep_settling=True).count("\n") - 4  # 3 comment lines and the header
    assert kept == int(np.searchsorted(t, s.time_s)) + 1
    assert d["delta_t_K"] == pytest.approx(truth.delta_t_K[0], abs=max(3 * d["u_delta_t_K"], 0.01))


def test_terminal_rendering_is_plain_text_with_the_curve_and_state():
    t, y, _ = _run(2.0, 20.0, 7)
    g, s = _feed_until_enough(t, y)
    text = render_terminal(g.time_s, g.temp_C, s, width=60, height=8)
    lines = text.splitlines()
    assert "\x1b[" not in text
    assert all(len(line) <= 60 for line in lines[:8])
    assert "█" in text and "|" in text  # the curve and the event marker
    assert lines[-2].startswith("[enough]") and "ΔT" in lines[-1]
    assert f"{y.max():8.3f}" in lines[0]
    coloured = g.render(60, 8, color=True)
    assert "\x1b[32m" in coloured
    # the guide's own view leaves the settling transient off: its top is the after-period's
    top = float(coloured.splitlines()[0].split("│")[0])
    assert top == pytest.approx(y[t >= EVENT_S].max(), abs=1e-3)


def test_bad_samples_and_options_are_clean_errors():
    g = LiveGuide()
    g.feed(0.0, 20.0)
    with pytest.raises(InputError, match="time went back"):
        g.feed(0.0, 20.1)
    with pytest.raises(InputError, match="finite"):
        g.feed(1.0, float("nan"))
    with pytest.raises(InputError, match="window_s"):
        GuideOptions(window_s=0.0)


def test_a_steady_drift_is_accepted_once_the_window_is_full():
    # no settling transient; 0.5 K below the jacket with k = 4e-4/s: a steady ~12 mK/min drift,
    # which Regnault–Pfaundler corrects exactly, so the start signal waits only for the window
    r = synthetic_run(
        releases=(Release(EVENT_S, -3.8, 35.0),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=4e-4,
        jacket_C=22.5,
        start_C=22.0,
        probe_lag_s=3.0,
        noise_K=0.002,
        seed=21,
    )
    g, s = _feed_until_enough(r.thermogram.time_s, r.thermogram.temp_C)
    assert s.start_signal_s is not None
    assert OPTIONS.window_s * 0.95 <= s.start_signal_s <= OPTIONS.window_s + 10.0
    # the last fore-period window (centred half a window before the event) against the model's
    # own drift, dT/dt = k(T∞ − T) = k·0.5 K·e^(−kt)
    centre = EVENT_S - OPTIONS.window_s / 2
    assert s.drift_K_per_min == pytest.approx(60 * 4e-4 * 0.5 * math.exp(-4e-4 * centre), rel=0.1)
    assert s.enough
    assert abs(s.delta_t_K - r.truth.delta_t_K[0]) <= max(3 * s.u_delta_t_K, 0.005)


def test_an_event_before_the_stable_signal_is_found_and_not_called_enough():
    # the release starts at 330 s, while the settling transient still changes the drift
    r = synthetic_run(
        releases=(Release(330.0, 2.0, 20.0),),
        duration_s=1400.0,
        dt_s=2.0,
        k_per_s=3e-4,
        jacket_C=22.0,
        start_C=21.9,
        noise_K=0.002,
        resolution_K=0.001,
        probe_lag_s=3.0,
        seed=1,
    )
    t = r.thermogram.time_s
    y = r.thermogram.temp_C + TRANSIENT_K * np.exp(-t / TRANSIENT_S)
    states = list(guide_stream(zip(t, y, strict=True), OPTIONS))
    s = states[-1]
    assert s.start_signal_s is None
    assert s.event_s is not None and 330.0 <= s.event_s <= 350.0
    event_state = next(x for x in states if x.phase == "event")
    assert "before the fore-period was stable" in event_state.message
    # with an unsteady fore-period the uncertainty stays large, so no "enough" is given
    assert not s.enough
