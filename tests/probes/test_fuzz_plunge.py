"""Seeded mutations of a plunge-test CSV, of the probe file's time-constant keys and of the
profile's --probe-tau: every case a clean refusal, or a result that is flagged or correct."""

import json
import random

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import HeatlogError
from heatlog.probes.probefile import parse_probe

TAU = 5.0


def _good_lines() -> list[str]:
    t = np.arange(0.0, 90.0, 0.5)
    y = np.where(t < 20.3, 21.0, 60.0 - 39.0 * np.exp(-np.maximum(t - 20.3, 0) / TAU))
    y = y + np.random.default_rng(0).normal(0.0, 0.02, t.size)
    return ["time_s,temp_C"] + [f"{a:.1f},{b:.4f}" for a, b in zip(t, y, strict=True)]


def _mutate(lines: list[str], rng: random.Random) -> str:
    out = list(lines)
    kind = rng.choice(["truncate", "flip", "delete", "dup", "text", "nonfinite", "huge", "rename"])
    i = rng.randrange(1, len(out))
    if kind == "truncate":
        out = out[: rng.randrange(1, len(out))]
    elif kind == "flip":
        j = rng.randrange(1, len(out))
        out[i], out[j] = out[j], out[i]
    elif kind == "delete":
        del out[i]
    elif kind == "dup":
        out.insert(i, out[i])
    elif kind == "text":
        out[i] = out[i].split(",")[0] + ",abc"
    elif kind == "nonfinite":
        out[i] = out[i].split(",")[0] + "," + rng.choice(["nan", "inf", "-inf"])
    elif kind == "huge":
        out[i] = out[i].split(",")[0] + "," + rng.choice(["1e308", "-1e160", "1e30"])
    else:
        out[0] = "time_s,tmp"
    return "\n".join(out) + "\n"


@pytest.mark.parametrize("seed", range(40))
def test_mutated_plunge_csv(tmp_path, seed):
    rng = random.Random(seed)
    path = tmp_path / "plunge.csv"
    path.write_text(_mutate(_good_lines(), rng), encoding="utf-8")
    r = CliRunner().invoke(main, ["probe", "tau", str(path), "--json"])
    assert r.exception is None or isinstance(r.exception, SystemExit), r.exception
    if r.exit_code != 0:
        assert r.output.startswith("Error:") and r.output.count("\n") == 1, r.output
        return
    d = json.loads(r.output)
    flagged = bool(d["warnings"])
    correct = abs(d["time_constant_s"] - TAU) <= 2.0 * d["u_time_constant_s"] + 0.05
    assert flagged or correct, d


BASE = (
    'id = "ntc-9"\nkind = "thermistor"\nmodel = "beta"\ncalibration_date = 2026-11-30\n'
    'reference = "invented"\nvalid_range_C = [-20.0, 80.0]\nuncertainty_K = 0.05\n'
    "{extra}[coefficients]\nR25 = 10000.0\nbeta = 3950.0\n"
)


@pytest.mark.parametrize(
    "extra",
    [
        "time_constant_s = 5.0\n",
        "u_time_constant_s = 0.5\n",
        'time_constant_s = "5"\nu_time_constant_s = 0.5\n',
        "time_constant_s = -5.0\nu_time_constant_s = 0.5\n",
        "time_constant_s = 1e308\nu_time_constant_s = 0.5\n",
        "time_constant_s = nan\nu_time_constant_s = 0.5\n",
        "time_constant_s = 5.0\nu_time_constant_s = -1.0\n",
        "time_constant_s = 5.0\nu_time_constant_s = inf\n",
        "time_constant_s = true\nu_time_constant_s = 0.5\n",
    ],
)
def test_bad_time_constant_keys_refused(extra):
    with pytest.raises(HeatlogError, match="time_constant_s"):
        parse_probe(BASE.format(extra=extra))


def test_good_time_constant_round_trips():
    from heatlog.probes.probefile import probe_to_toml

    p = parse_probe(BASE.format(extra="time_constant_s = 5.0\nu_time_constant_s = 0.5\n"))
    q = parse_probe(probe_to_toml(p))
    assert (q.time_constant_s, q.u_time_constant_s) == (5.0, 0.5)


@pytest.mark.parametrize(
    "tau, u, fragment",
    [("nan", "1", "probe time constant"), ("1e9", "1", "over a tenth"), ("5", "nan", "≥ 0")],
)
def test_bad_probe_tau_option(tmp_path, tau, u, fragment):
    t = np.arange(0.0, 7200.0, 10.0)
    y = 20.0 + 5.0 * np.exp(-t / 2000.0)
    path = tmp_path / "log.csv"
    np.savetxt(path, np.column_stack([t, y]), delimiter=",", header="time_s,temp_C", comments="")
    r = CliRunner().invoke(
        main,
        ["profile", str(path), "--heat-capacity", "60", "--loss", "0.06", "--u-loss", "0",
         "--env-temp", "20", "--probe-tau", tau, "--u-probe-tau", u],
    )  # fmt: skip
    assert r.exit_code == 2 and fragment in r.output and r.output.count("\n") == 1, r.output
