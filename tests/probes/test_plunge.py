"""Probe time constant from a plunge test (invented step responses with a known τ)."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import HeatlogError
from heatlog.profile.lag import plunge_fit


def _step(tau, *, t_step=20.3, noise=0.02, seed=1, fast_part=0.0):
    t = np.arange(0.0, 120.0, 0.5)
    x = np.maximum(t - t_step, 0.0)
    shape = (1 - fast_part) * np.exp(-x / tau) + fast_part * np.exp(-x / 0.8)
    y = 60.0 + (21.0 - 60.0) * shape
    return t, y + np.random.default_rng(seed).normal(0.0, noise, t.size)


@pytest.mark.parametrize("tau", [2.0, 5.0, 12.0])
def test_recovers_a_first_order_tau(tau):
    f = plunge_fit(*_step(tau))
    assert abs(f.tau_s - tau) < 3 * f.u_tau_s + 1e-3
    assert f.start_s == pytest.approx(20.3, abs=0.1)
    assert not f.warnings


def test_two_time_constants_flagged_with_a_wider_u():
    f = plunge_fit(*_step(5.0, fast_part=0.2))
    assert f.warnings and "not first order" in f.warnings[0]
    assert f.u_tau_s > 0.05 * f.tau_s
    assert abs(f.tau_s - 4.16) < 2 * f.u_tau_s  # 0.8·5 s + 0.2·0.8 s, the mean response time


def test_refuses_a_flat_log():
    t = np.arange(0.0, 60.0, 0.5)
    with pytest.raises(HeatlogError, match="under 20"):
        plunge_fit(t, 21.0 + np.random.default_rng(0).normal(0, 0.02, t.size))


def test_cli_tau(tmp_path):
    t, y = _step(5.0)
    path = tmp_path / "plunge.csv"
    np.savetxt(path, np.column_stack([t, y]), delimiter=",", header="time_s,temp_C", comments="")
    r = CliRunner().invoke(main, ["probe", "tau", str(path), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["time_constant_s"] == pytest.approx(5.0, abs=0.05) and d["u_time_constant_s"] > 0
    assert d["cautions"]  # a 60 °C bath scalds
    r = CliRunner().invoke(main, ["probe", "tau", str(path)])
    assert "time_constant_s = " in r.output and "u = " in r.output and "(k=1)" in r.output
    path.write_text("time_s,temp_C\n0,1\n1,2\n")
    r = CliRunner().invoke(main, ["probe", "tau", str(path)])
    assert r.exit_code != 0 and r.output.startswith("Error:") and r.output.count("\n") == 1
