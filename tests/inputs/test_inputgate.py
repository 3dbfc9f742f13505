"""The input gate: every implausible thermogram or long-run log ends in a refusal or a flagged,
correct result (invented data throughout)."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import InputError
from heatlog.inputgate import Finding, gate_series, spike_rows
from heatlog.profile.synthetic import warmer_run
from heatlog.reduce import reduce_thermogram
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.thermogram import read_thermogram_csv


@pytest.fixture(scope="module")
def cup():
    """An invented cup run: an exothermic release of +3 K at 400 s, 1 s sampling."""
    return synthetic_run(
        releases=(Release(400.0, 3.0, 20.0),),
        duration_s=1200.0,
        dt_s=1.0,
        k_per_s=2e-4,
        probe_lag_s=2.0,
        noise_K=0.003,
        seed=5,
    )


def _write(path, t, y, header="time_s,temp_C", extra=None):
    rows = [header]
    for i, (a, b) in enumerate(zip(t, y, strict=True)):
        rows.append(f"{float(a)!r},{float(b)!r}" + ("" if extra is None else f",{extra[i]}"))
    path.write_text("# invented data\n" + "\n".join(rows) + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def clean(cup, tmp_path_factory):
    p = _write(
        tmp_path_factory.mktemp("clean") / "run.csv", cup.thermogram.time_s, cup.thermogram.temp_C
    )
    th = read_thermogram_csv(p)
    return th, reduce_thermogram(th)


def _reduce(path):
    th = read_thermogram_csv(path)
    return th.metadata["findings"], reduce_thermogram(th)


def test_clean_run_has_no_findings(clean):
    th, red = clean
    assert th.metadata["findings"] == ()
    assert abs(red.delta_t_K - 3.0) < 3 * red.U_delta_t_K + 0.02


@pytest.mark.parametrize("value", [1e30, 1e6, 1e308, 1e160, -1e160, 150.0, -60.0])
def test_one_spike_is_left_out_flagged_and_the_answer_unchanged(cup, clean, tmp_path, value):
    y = cup.thermogram.temp_C.copy()
    y[300] = value  # data row 301 is file line 303 (a comment and the header above)
    findings, red = _reduce(_write(tmp_path / "s.csv", cup.thermogram.time_s, y))
    assert len(findings) == 1 and findings[0].severity == "flag"
    assert findings[0].code in ("spike", "absurd") and findings[0].lines == (303,)
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


def test_spike_inside_the_rise_is_found_too(cup, clean, tmp_path):
    y = cup.thermogram.temp_C.copy()
    y[405] += 5.0  # in the steep part of the event
    findings, red = _reduce(_write(tmp_path / "s.csv", cup.thermogram.time_s, y))
    assert [f.code for f in findings] == ["spike"]
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


def test_a_steep_clean_event_is_not_a_spike():
    """A step of 5 K between two samples (monotone) is the curve, not a spike."""
    y = np.concatenate([np.full(50, 20.0), np.full(50, 25.0)]) + 0.001 * np.sin(np.arange(100))
    spikes, _ = spike_rows(y, np.ones(100, dtype=bool))
    assert spikes.size == 0


def test_a_broken_stretch_of_impossible_values_is_refused(cup, tmp_path):
    y = cup.thermogram.temp_C.copy()
    y[300:320] = 1e30
    with pytest.raises(InputError, match=r"20 impossible reading.*lines 303–322") as err:
        read_thermogram_csv(_write(tmp_path / "s.csv", cup.thermogram.time_s, y))
    assert "\n" not in str(err.value)


@pytest.mark.parametrize("sentinel", [-40.0, -127.0, 85.0, 9999.0, -999.0])
def test_probe_fault_sentinels_are_not_integrated(cup, clean, tmp_path, sentinel):
    y = cup.thermogram.temp_C.copy()
    y[600:606] = sentinel  # a six-second fault in the after-period
    findings, red = _reduce(_write(tmp_path / "s.csv", cup.thermogram.time_s, y))
    assert [f.code for f in findings] == ["sentinel"] and findings[0].count == 6
    assert abs(red.delta_t_K - clean[1].delta_t_K) < 2 * clean[1].u_delta_t_K


def test_flags_column_rows_are_left_out(cup, clean, tmp_path):
    y = cup.thermogram.temp_C.copy()
    flags = np.zeros(y.size, dtype=int)
    y[700:703], flags[700:703] = 0.0, 1
    p = _write(tmp_path / "f.csv", cup.thermogram.time_s, y, "time_s,temp_C,status", flags)
    findings, red = _reduce(p)
    assert "flagged-rows" in [f.code for f in findings]
    assert abs(red.delta_t_K - clean[1].delta_t_K) < 2 * clean[1].u_delta_t_K


def test_milliseconds_from_the_sampling_pattern(cup, clean, tmp_path):
    t = np.round(cup.thermogram.time_s * 1000.0)
    findings, red = _reduce(_write(tmp_path / "ms.csv", t, cup.thermogram.temp_C))
    assert [f.code for f in findings] == ["time-unit"] and "milliseconds" in findings[0].message
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


@pytest.mark.parametrize(
    "header, scale, offset, code",
    [
        ("time [ms],temp_C", 1000.0, 0.0, "time-unit"),
        ("time (min),temp_C", 1 / 60, 0.0, "time-unit"),
        ("time_s,T [K]", 1.0, 273.15, "temp-unit"),
        ("time_s,temp (°F)", 1.0, None, "temp-unit"),
    ],
)
def test_units_in_headers(cup, clean, tmp_path, header, scale, offset, code):
    t = cup.thermogram.time_s * scale
    y = cup.thermogram.temp_C
    y = y * 9 / 5 + 32 if offset is None else y + offset
    findings, red = _reduce(_write(tmp_path / "u.csv", t, y, header))
    assert [f.code for f in findings] == [code]
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


def test_kelvin_readings_are_recognised_from_their_range(cup, clean, tmp_path):
    y = cup.thermogram.temp_C + 273.15
    findings, red = _reduce(_write(tmp_path / "k.csv", cup.thermogram.time_s, y))
    assert [f.code for f in findings] == ["temp-unit"] and "kelvin" in findings[0].message
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


def test_stated_celsius_is_believed(tmp_path):
    """A header that says °C is not second-guessed from the range."""
    t = np.arange(40.0)
    y = 300.0 + 0.01 * t
    g = gate_series(t, y, where="x", temp_unit="°C")
    assert g.findings == () and g.temp_C[0] == 300.0


def test_unknown_unit_in_a_header_is_refused(cup, tmp_path):
    p = _write(
        tmp_path / "u.csv", cup.thermogram.time_s, cup.thermogram.temp_C, "time_s,temp [furlongs]"
    )
    with pytest.raises(InputError, match="not a temperature unit"):
        read_thermogram_csv(p)


def test_duplicated_and_swapped_time_rows(cup, clean, tmp_path):
    t, y = list(cup.thermogram.time_s), list(cup.thermogram.temp_C)
    t.insert(500, t[500])
    y.insert(500, y[500])  # a duplicated line
    t[800] = t[800] + 5000.0  # one time stamp out of order
    findings, red = _reduce(_write(tmp_path / "d.csv", np.array(t), np.array(y)))
    assert sorted(f.code for f in findings) == ["duplicate-row", "time-glitch"]
    assert abs(red.delta_t_K - clean[1].delta_t_K) < clean[1].u_delta_t_K


def test_absurd_times_never_reach_arithmetic(cup, tmp_path):
    t = cup.thermogram.time_s.copy()
    t[200] = 1e300
    findings, _ = _reduce(_write(tmp_path / "t.csv", t, cup.thermogram.temp_C))
    assert [f.code for f in findings] == ["absurd"]


def test_cli_reduce_prints_and_returns_findings(cup, tmp_path):
    y = cup.thermogram.temp_C.copy()
    y[300] = 1e30
    p = _write(tmp_path / "s.csv", cup.thermogram.time_s, y)
    r = CliRunner().invoke(main, ["reduce", str(p), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert d["findings"][0]["code"] == "absurd" and d["findings"][0]["lines"] == [303]
    assert abs(d["delta_t_K"] - 3.0) < 0.1
    r = CliRunner().invoke(main, ["reduce", str(p)])
    assert "input check: flagged [absurd]" in r.output and "line 303" in r.output


def test_report_has_an_input_checks_section(cup, tmp_path):
    y = cup.thermogram.temp_C.copy()
    y[300] = 1e6
    p = _write(tmp_path / "s.csv", cup.thermogram.time_s, y)
    out = tmp_path / "r.html"
    r = CliRunner().invoke(main, ["report", str(p), "--out", str(out)])
    assert r.exit_code == 0, r.output
    html = out.read_text(encoding="utf-8")
    assert "<h2>Input checks</h2>" in html and "line 303" in html


def test_finding_round_trips_to_json():
    f = Finding("spike", "flag", "one spike", "nothing", (5,), 1)
    assert json.loads(json.dumps(f.to_dict()))["lines"] == [5]
    assert f.text().startswith("flagged [spike]")


# long runs (heatlog profile)


@pytest.fixture(scope="module")
def warmer(tmp_path_factory):
    run = warmer_run(noise_K=0.01, seed=1)
    return run, tmp_path_factory.mktemp("warmer")


def _profile(path, *extra):
    args = ["profile", str(path), "--heat-capacity", "60", "--u-heat-capacity", "1",
            "--loss", "0.06", "--u-loss", "0.003", "--env-temp", "20", "--kind", "warmer", "--json"]  # fmt: skip
    r = CliRunner().invoke(main, args + list(extra))
    return r


def test_profile_with_a_1e30_spike_is_flagged_and_right(warmer):
    run, folder = warmer
    ok = _profile(_write(folder / "ok.csv", run.time_s, run.temp_C))
    y = run.temp_C.copy()
    y[700] = 1e30
    bad = _profile(_write(folder / "spike.csv", run.time_s, y))
    assert ok.exit_code == 0 and bad.exit_code == 0, bad.output
    a, b = json.loads(ok.output), json.loads(bad.output)
    assert [f["code"] for f in b["findings"]] == ["absurd"] and a["findings"] == []
    assert abs(b["heat_J"] - a["heat_J"]) < a["u_heat_J"]


def test_profile_in_milliseconds_is_converted(warmer):
    run, folder = warmer
    ok = json.loads(_profile(_write(folder / "ok.csv", run.time_s, run.temp_C)).output)
    r = _profile(_write(folder / "ms.csv", np.round(run.time_s * 1000), run.temp_C))
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert [f["code"] for f in d["findings"]] == ["time-unit"]
    assert abs(d["heat_J"] - ok["heat_J"]) < ok["u_heat_J"]


def test_profile_settings_bounded_before_arithmetic(warmer):
    run, folder = warmer
    p = _write(folder / "ok.csv", run.time_s, run.temp_C)
    for opt, value in (("--heat-capacity", "1e300"), ("--heat-capacity", "-40"), ("--loss", "-1")):
        r = CliRunner().invoke(
            main,
            [
                "profile",
                str(p),
                "--heat-capacity",
                "60",
                "--loss",
                "0.06",
                "--env-temp",
                "20",
                opt,
                value,
            ],
        )
        assert r.exit_code == 2 and r.output.count("\n") == 1, r.output


def test_profile_fault_sentinels_are_not_integrated_as_heat(warmer):
    run, folder = warmer
    ok = json.loads(_profile(_write(folder / "ok.csv", run.time_s, run.temp_C)).output)
    y = run.temp_C.copy()
    y[900:903] = -40.0  # a minute of probe fault, mid-run
    r = _profile(_write(folder / "fault.csv", run.time_s, y))
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert [f["code"] for f in d["findings"]] == ["sentinel"]
    assert abs(d["heat_J"] - ok["heat_J"]) < ok["u_heat_J"]


def test_profile_in_kelvin_from_a_run_file(warmer, tmp_path):
    run, folder = warmer
    ok = json.loads(_profile(_write(folder / "ok.csv", run.time_s, run.temp_C)).output)
    _write(tmp_path / "k.csv", run.time_s, run.temp_C + 273.15, "time_s,T [K]")
    (tmp_path / "k.toml").write_text(
        "# invented data\n[log]\nfile = 'k.csv'\n[profile]\nheat_capacity_J_per_K = 60.0\n"
        "u_heat_capacity_J_per_K = 1.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.003\n"
        "env_temp_C = 20.0\nkind = 'warmer'\n"
    )
    r = CliRunner().invoke(main, ["profile", str(tmp_path / "k.toml"), "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert [f["code"] for f in d["findings"]] == ["temp-unit"]
    assert abs(d["heat_J"] - ok["heat_J"]) < ok["u_heat_J"]


def test_a_short_warmer_log_in_milliseconds_is_recognised_by_its_kind(tmp_path):
    """4 h at 5 s in ms would be 167 days in s: plausible for setting cement, not for a warmer."""
    run = warmer_run(duration_s=4 * 3600.0, dt_s=5.0, noise_K=0.01, seed=2)
    ok = json.loads(_profile(_write(tmp_path / "ok.csv", run.time_s, run.temp_C)).output)
    r = _profile(_write(tmp_path / "ms.csv", np.round(run.time_s * 1000), run.temp_C))
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert [f["code"] for f in d["findings"]] == ["time-unit"]
    assert abs(d["heat_J"] - ok["heat_J"]) < ok["u_heat_J"]
