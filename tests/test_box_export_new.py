"""`heatlog box fit`, `heatlog export` and `heatlog new` end to end on invented data: the
profile synthetic runs (solve_ivp truth, profile/synthetic.py), the demo's simulated cup runs and
the simulator's hand-warmer scenario (the real firmware on a virtual board)."""

import json
import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.boxfile import load_box
from heatlog.cli import main
from heatlog.profile.synthetic import PlateauDecay, long_run
from heatlog.runfile import load_run


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def _write(path, names, cols):
    rows = "\n".join(",".join(f"{v:.6f}" for v in row) for row in np.column_stack(cols))
    path.write_text("# invented data\n" + ",".join(names) + "\n" + rows + "\n", encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def heater_run(tmp_path_factory):
    """A box heated by 2 W for 3 h, then cooling: truth C = 500 J/K, G = 0.1 W/K (invented)."""
    src = PlateauDecay(2.0, 3 * 3600.0, 1.0)
    r = long_run(src, duration_s=8 * 3600.0, dt_s=10.0, heat_capacity_J_per_K=500.0,
                 loss_W_per_K=0.1, env_C=21.0, noise_K=0.01, seed=5)  # fmt: skip
    folder = tmp_path_factory.mktemp("box")
    return _write(folder / "heater.csv", ["time_s", "temp_C"], [r.time_s, r.temp_C])


def test_box_fit_from_a_heater_run_covers_the_truth(heater_run, tmp_path):
    out = tmp_path / "box.toml"
    r = run("box", "fit", heater_run, "--power", 2.0, "--u-power", 0.01, "--on", 0,
            "--off", 3 * 3600, "--env-temp", 21.0, "--u-env-temp", 0.05, "--out", out, "--json")  # fmt: skip
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    box = load_box(out)
    for value, u, true in ((box.heat_capacity.value, box.heat_capacity.u, 500.0),
                           (box.loss.value, box.loss.u, 0.1)):  # fmt: skip
        assert u > 0 and abs(value - true) <= 2 * u, (value, u, true)
        assert value == pytest.approx(true, rel=0.02)
    assert d["method"] == "heating-curve fit" and -1 <= d["correlation_C_G"] <= 1
    # the profile treats C and G as independent: a correlated pair is said so
    assert any("correlated" in n for n in d["notes"]) == (abs(d["correlation_C_G"]) > 0.3)
    text = run("box", "fit", heater_run, "--power", 2.0, "--u-power", 0.01, "--on", 0,
               "--off", 3 * 3600, "--env-temp", 21.0, "--out", tmp_path / "b2.toml").output  # fmt: skip
    assert "(u, k=1)" in text and "Caution" in text and "profile --box" in text


def test_box_fit_lists_what_is_missing_and_refuses_bad_files(heater_run, tmp_path):
    r = run("box", "fit", heater_run, "--power", 2.0)
    assert r.exit_code == 2
    for name in ("--env-temp", "--u-power", "--on", "--off"):
        assert name in r.output
    r = run("box", "fit", heater_run, "--cooling", "--env-temp", 21)
    assert "--heat-capacity" in r.output and "--u-heat-capacity" in r.output
    # a damaged box file: every corruption ends in one clear line (seeded mutations)
    good = tmp_path / "good.toml"
    run("box", "fit", heater_run, "--power", 2.0, "--u-power", 0.01, "--on", 0, "--off", 10800,
        "--env-temp", 21.0, "--out", good)  # fmt: skip
    text = good.read_text(encoding="utf-8")
    rng = np.random.default_rng(7)
    mutations = [
        lambda s: s.replace("loss_W_per_K", "loss_W"),
        lambda s: re.sub(r"u_loss_W_per_K = .*", "u_loss_W_per_K = -1.0", s),
        lambda s: re.sub(
            r"^heat_capacity_J_per_K = .*", "heat_capacity_J_per_K = nan", s, flags=re.M
        ),
        lambda s: re.sub(r"correlation_C_G = .*", "correlation_C_G = 3.0", s),
        lambda s: s + "\ncolour = 'red'\n",
        lambda s: s[: len(s) // 2],
        lambda s: re.sub(r"u_heat_capacity_J_per_K = .*", "u_heat_capacity_J_per_K = 0.0", s),
    ]
    for i in rng.permutation(len(mutations)):
        bad = tmp_path / f"bad{i}.toml"
        bad.write_text(mutations[i](text), encoding="utf-8")
        r = run("profile", heater_run, "--box", bad, "--env-temp", 21)
        assert r.exit_code == 2, (i, r.output)
        assert r.output.startswith("Error: ") and len(r.output.strip().splitlines()) == 1


def test_profile_reads_the_box_from_the_option_and_from_the_run_file(heater_run, tmp_path):
    box = tmp_path / "box.toml"
    run("box", "fit", heater_run, "--power", 2.0, "--u-power", 0.01, "--on", 0, "--off", 10800,
        "--env-temp", 21.0, "--out", box)  # fmt: skip
    # a warmer in the same box (C = 500 J/K, G = 0.1 W/K): Q at the end against the truth
    w = long_run(PlateauDecay(1.5, 5 * 3600.0, 7200.0), duration_s=12 * 3600.0, dt_s=20.0,
                 heat_capacity_J_per_K=500.0, loss_W_per_K=0.1, env_C=21.0, noise_K=0.01)  # fmt: skip
    log = _write(tmp_path / "warmer.csv", ["time_s", "temp_C"], [w.time_s, w.temp_C])
    by_option = run("profile", log, "--box", box, "--env-temp", 21.0, "--json")
    assert by_option.exit_code == 0, by_option.output
    q = json.loads(by_option.output)
    rf = tmp_path / "warmer.toml"
    rf.write_text('title = "invented warmer"\n[log]\nfile = "warmer.csv"\n[profile]\n'
                  'box = "box.toml"\nenv_temp_C = 21.0\nkind = "warmer"\n', encoding="utf-8")  # fmt: skip
    by_file = run("profile", rf, "--json")
    assert by_file.exit_code == 0, by_file.output
    q2 = json.loads(by_file.output)
    true_q = float(w.true_heat_J[-1])
    for d in (q, q2):
        assert abs(d["heat_J"] - true_q) <= 2 * d["u_heat_J"], (d["heat_J"], true_q)
    both = run("profile", log, "--box", box, "--heat-capacity", 500, "--env-temp", 21.0)
    assert both.exit_code == 2 and "not both" in both.output


def test_export_profile_csv_has_units_and_matches_the_profile(heater_run, tmp_path):
    from heatlog.profile.synthetic import warmer_run

    w = warmer_run(noise_K=0.01)
    _write(tmp_path / "warmer.csv", ["time_s", "temp_C"], [w.time_s, w.temp_C])
    rf = tmp_path / "warmer.toml"
    rf.write_text('title = "invented warmer"\n[log]\nfile = "warmer.csv"\n[profile]\n'
                  f"heat_capacity_J_per_K = {w.heat_capacity_J_per_K}\nu_heat_capacity_J_per_K = 1.0\n"
                  f"loss_W_per_K = {w.loss_W_per_K}\nu_loss_W_per_K = 0.001\n"
                  'env_temp_C = 20.0\nsample_mass_g = 40.0\nu_sample_mass_g = 0.1\nkind = "warmer"\n',
                  encoding="utf-8")  # fmt: skip
    r = run("export", "profile", rf, "--json")
    assert r.exit_code == 0, r.output
    out = json.loads(r.output)["csv"]
    lines = Path(out).read_text(encoding="utf-8").splitlines()
    header = next(line for line in lines if not line.startswith("#"))
    assert header.split(",")[:8] == [
        "time_s",
        "age_h",
        "temp_C",
        "env_C",
        "Q_J",
        "u_Q_J",
        "P_W",
        "u_P_W",
    ]
    assert "Q_J_per_g" in header and any("k=1" in line for line in lines if line.startswith("#"))
    from heatlog.csvtable import read_columns

    data = read_columns(out, ["time_s", "Q_J"])
    profile = json.loads(run("profile", rf, "--json").output)
    assert data["Q_J"][-1] == pytest.approx(profile["heat_J"], rel=1e-9)
    assert data["Q_J"][-1] == pytest.approx(w.true_heat_J[-1], rel=0.02)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    from heatlog.demo import run_demo

    return run_demo(tmp_path_factory.mktemp("demo"))


def test_export_thermogram_of_the_demo_steps_by_the_corrected_rise(demo, tmp_path):
    rf = demo.out / "calibration.toml"
    r = run("export", "thermogram", rf, "--out", tmp_path / "t.csv", "--json")
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    from heatlog.csvtable import read_columns

    names = ["time_s", "temp_C", "drift_K_per_s", "corrected_C"]
    data = read_columns(tmp_path / "t.csv", names)
    assert [n for n in d["columns"]] == names
    t, c = data["time_s"], data["corrected_C"]
    before = np.median(c[t < d["event_start_s"] - 30])
    after = np.median(c[t > d["after_start_s"] + 30])
    # the step of the corrected curve is the corrected ΔT (trapezoid vs the reduction's own
    # integration: within a few standard uncertainties plus the readings' scatter)
    assert after - before == pytest.approx(d["delta_t_K"], abs=5 * d["u_delta_t_K"] + 0.01)


def test_new_templates_filled_in_evaluate_on_the_demo(demo, tmp_path):
    cal_demo = load_run(demo.out / "calibration.toml")
    run_demo = load_run(demo.out / "dissolution.toml")
    log_lines = (
        f'file = "{cal_demo.log.file.as_posix()}"\ntime_col = "time_s"\nraw_col = "{cal_demo.log.raw_col}"\n'
        f'chain = "{cal_demo.log.chain}"\nprobe = "{cal_demo.log.probe.as_posix()}"\n'
    )
    for kind in ("cup", "calibration", "profile"):
        r = run("new", kind, tmp_path / f"{kind}.toml", "--json")
        assert r.exit_code == 0 and json.loads(r.output)["next"].startswith("heatlog ")
        assert load_run(tmp_path / f"{kind}.toml").title.startswith("EDIT")  # loads as written
    again = run("new", "cup", tmp_path / "cup.toml")
    assert again.exit_code == 2 and "--force" in again.output

    def fill(kind, log_file, values):
        text = (tmp_path / f"{kind}.toml").read_text(encoding="utf-8")
        text = re.sub(r'(?m)^file = .*\n(time_col = .*\n)?temp_col = .*\n', log_lines.replace(
            cal_demo.log.file.as_posix(), log_file), text)  # fmt: skip
        for key, value in values.items():
            text = re.sub(rf"(?m)^{key} = [^#\n]*", f"{key} = {value} ", text)
        (tmp_path / f"{kind}.toml").write_text(text, encoding="utf-8")

    g = cal_demo.electrical.logged  # the demo's heater energy comes from its logged monitor
    fill("calibration", cal_demo.log.file.as_posix(), {"mass_g": cal_demo.contents[0].mass_g.value})
    text = (tmp_path / "calibration.toml").read_text(encoding="utf-8")
    text = re.sub(r"(?m)^(u_)?(power_W|seconds) = .*\n", "", text)  # as the template says
    for key, value in (("monitor", f'"{g.monitor}"'), ("bus_col", f'"{g.bus_col}"'),
                       ("shunt_col", f'"{g.shunt_col}"'), ("shunt_ohm", g.shunt_ohm),
                       ("u_shunt_rel", g.u_shunt_rel)):  # fmt: skip
        text = re.sub(rf"(?m)^# {key} = [^#\n]*", f"{key} = {value} ", text)
    (tmp_path / "calibration.toml").write_text(text, encoding="utf-8")
    cal = run("reduce", tmp_path / "calibration.toml", "--json")
    assert cal.exit_code == 0, cal.output
    assert json.loads(cal.output)["calorimeter_constant"]["value_J_per_K"] == pytest.approx(
        demo.calibration.c_cal.value, rel=1e-9)  # fmt: skip
    salt = run_demo.contents[1]
    fill("cup", run_demo.log.file.as_posix(), {})
    text = (tmp_path / "cup.toml").read_text(encoding="utf-8")
    text = text.replace("cp = 1.7 ", f"cp = {salt.cp.value} ").replace(
        "u_cp = 0.1 ", f"u_cp = {salt.cp.u} "
    )
    text = text.replace("mass_g = 150.0", f"mass_g = {run_demo.contents[0].mass_g.value}")
    text = text.replace("mass_g = 8.0", f"mass_g = {salt.mass_g.value}")
    (tmp_path / "cup.toml").write_text(text, encoding="utf-8")
    cup = run("reduce", tmp_path / "cup.toml", "--json")
    assert cup.exit_code == 0, cup.output
    measured = json.loads(cup.output)
    assert measured["enthalpy_J_per_g"] == pytest.approx(demo.run.specific.value, rel=0.02)
    report = run("report", tmp_path / "cup.toml", "--out", tmp_path / "cup.html")
    assert report.exit_code == 0, report.output and (tmp_path / "cup.html").stat().st_size > 1000


def _sim_csv(tmp_path, scn, hours, name, seed=3):
    """Log ``hours`` of scenario ``scn`` on a virtual board (the real firmware) and export it."""
    import datetime as dt
    from importlib import resources
    from pathlib import Path

    from heatlog.csvtable import read_columns
    from heatlog.device.export import export_run
    from heatlog.probes import fit_resistance, probe_from_fit, save_probe
    from heatlog.sim import scenarios as sc
    from heatlog.sim.board import VirtualBoard

    board = VirtualBoard(scn, tmp_path / f"flash-{name}", seed=seed)
    board.log_run(hours * 3600.0)
    points = Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv"))
    pts = read_columns(points, ["temp_C", "resistance_ohm"])
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    probes = tmp_path / f"probes-{name}"
    probes.mkdir()
    save_probe(probe_from_fit(fit, sc.PROBE_ID, reference="invented reference, u = 0.01 K",
                              calibration_date=dt.date(2026, 11, 30)), probes / f"{sc.PROBE_ID}.toml")  # fmt: skip
    csv, _ = export_run(board.root / "r0001.hlg", probes)
    header = next(n for n in csv.read_text(encoding="utf-8").splitlines() if not n.startswith("#"))
    temp_col = next(c for c in header.split(",") if c.endswith("_temp_C"))
    return csv, temp_col, board.truth()["runs"][0]


def test_box_fit_and_new_profile_on_the_hand_warmer_scenario(tmp_path):
    """The simulator's hand-warmer box (invented): a heater run in the same box (1 W for an hour,
    logged by the real firmware) gives C and G; `heatlog new profile` filled in with that box file
    gives the pouch's heat from the hand-warmer run against the simulator's truth."""
    from heatlog.sim import scenarios as sc
    from heatlog.sim.thermal import Heater

    warmer = sc.SCENARIOS["hand-warmer"]
    vessel = warmer.experiments[0].vessel
    heater_exp = sc.Experiment("box-heater", "Heater in the hand-warmer box (invented data)",
                               vessel, (Heater(600.0, 3600.0, 1.0),), 4 * 3600.0)  # fmt: skip
    # logged every 2 s: the lag correction needs a few readings across each switching instant
    heater_scn = sc.Scenario("hand-warmer-box", "heater in the hand-warmer box", 2000,
                             warmer.oversample, (heater_exp,))  # fmt: skip
    heater_csv, temp_col, _ = _sim_csv(tmp_path, heater_scn, 4.0, "heater")
    box = tmp_path / "box.toml"
    r = run("box", "fit", heater_csv, "--power", 1.0, "--u-power", 0.005, "--on", 600,
            "--off", 4200, "--temp-col", temp_col, "--env-temp", vessel.room_C,
            "--u-env-temp", 0.05, "--out", box, "--json")  # fmt: skip
    # the probe lags the box by 20 s: uncorrected, the heating curve does not follow its model
    assert r.exit_code == 2 and "does not follow its model" in r.output, r.output
    r = run("box", "fit", heater_csv, "--power", 1.0, "--u-power", 0.005, "--on", 600,
            "--off", 4200, "--temp-col", temp_col, "--env-temp", vessel.room_C,
            "--u-env-temp", 0.05, "--probe-tau", vessel.probe_lag_s, "--u-probe-tau", 1.0,
            "--out", box, "--json")  # fmt: skip
    assert r.exit_code == 0, r.output
    b = load_box(box)
    # the probe's lag corrected (a plunge test's τ, 1 s uncertain): within 5 % and within U(k=2)
    assert b.heat_capacity.value == pytest.approx(vessel.heat_capacity_J_per_K, rel=0.05)
    assert b.loss.value == pytest.approx(vessel.exchange_W_per_K, rel=0.05)

    csv, temp_col, truth = _sim_csv(tmp_path, warmer, 6.0, "warmer")
    run("new", "profile", tmp_path / "warmer.toml")
    text = (tmp_path / "warmer.toml").read_text(encoding="utf-8")
    text = text.replace('file = "run.csv"', f'file = "{csv.as_posix()}"')
    text = text.replace('temp_col = "temp_C"', f'temp_col = "{temp_col}"')
    text = re.sub(r"(?m)^(u_)?(heat_capacity_J_per_K|loss_W_per_K) = .*\n", "", text)
    text = text.replace("[profile]\n", '[profile]\nbox = "box.toml"\n')
    text = text.replace("env_temp_C = 20.0", f"env_temp_C = {vessel.room_C}")
    text = text.replace("# threshold_C = 40.0", "threshold_C = 40.0")
    text = text.replace("# band_low_C = 37.0", "band_low_C = 37.0")
    text = text.replace("# band_high_C = 50.0", "band_high_C = 50.0")
    (tmp_path / "warmer.toml").write_text(text, encoding="utf-8")
    p = run("profile", tmp_path / "warmer.toml", "--json")
    assert p.exit_code == 0, p.output
    d = json.loads(p.output)
    assert d["heat_J"] == pytest.approx(truth["released_so_far_J"], rel=0.05)
    assert abs(d["heat_J"] - truth["released_so_far_J"]) <= 2 * d["u_heat_J"] + 0.02 * d["heat_J"]
    exported = run("export", "profile", tmp_path / "warmer.toml", "--json")
    assert exported.exit_code == 0, exported.output
    report = run("report", tmp_path / "warmer.toml", "--out", tmp_path / "warmer.html")
    assert report.exit_code == 0, report.output
    html = (tmp_path / "warmer.html").read_text(encoding="utf-8")
    # the profile report carries what `heatlog profile` prints, and a temperature plot
    assert 'id="fig-profile-temperature"' in html
    for words in (
        "threshold 40 °C",
        "time within 37–50 °C",
        "heat-loss coefficient G",
        "heat capacity C",
    ):
        assert words in html, words
    if d["metrics"]["time_to_threshold_s"] is not None:
        hours = f"{d['metrics']['time_to_threshold_s'] / 3600:.3g} h"
        assert f"reached after {hours}" in html

    # a second pouch (another seed of the invented scenario) compared with the first
    csv2, _, _ = _sim_csv(tmp_path, warmer, 6.0, "warmer2", seed=4)
    second = tmp_path / "warmer2.toml"
    second.write_text(
        text.replace(csv.as_posix(), csv2.as_posix()).replace(
            "title = ", 'title = "second pouch" #'
        ),
        encoding="utf-8",
    )
    cmp = run("compare", tmp_path / "warmer.toml", second, "--out", tmp_path / "cmp.html", "--json")
    assert cmp.exit_code == 0, cmp.output
    got = json.loads(cmp.output)
    assert [r["label"] for r in got["runs"]][1] == "second pouch"
    assert all("Q per gram" in r["figures"] for r in got["runs"])
    page = (tmp_path / "cmp.html").read_text(encoding="utf-8")
    assert "data:image/png;base64," in page and "second pouch" in page and "k=1" in page


@pytest.mark.parametrize(
    ("profile_table", "fragment"),
    [
        ('box = "missing.toml"\nenv_temp_C = 21.0\n', "no such box file"),
        ('box = "box.toml"\nheat_capacity_J_per_K = 5.0\nenv_temp_C = 21.0\n', "not both"),
        ("box = 3\nenv_temp_C = 21.0\n", "expected a file name"),
    ],
)
def test_a_bad_box_reference_in_a_run_file_is_one_line(tmp_path, profile_table, fragment):
    (tmp_path / "box.toml").write_text(
        "heat_capacity_J_per_K = 500.0\nu_heat_capacity_J_per_K = 5.0\nloss_W_per_K = 0.1\n"
        'u_loss_W_per_K = 0.002\nmethod = "heating-curve fit"\n',
        encoding="utf-8",
    )
    rf = tmp_path / "run.toml"
    rf.write_text('[log]\nfile = "run.csv"\n[profile]\n' + profile_table, encoding="utf-8")
    for args in (["profile", rf], ["export", "profile", rf], ["report", rf]):
        r = run(*args)
        assert r.exit_code == 2, r.output
        assert r.output.startswith("Error: ") and fragment in r.output, r.output


def test_export_refuses_what_it_cannot_export(tmp_path):
    cup = tmp_path / "cup.toml"
    cup.write_text('[log]\nfile = "run.csv"\n', encoding="utf-8")
    r = run("export", "profile", cup)
    assert r.exit_code == 2 and "[profile]" in r.output
    r = run("export", "profile", tmp_path / "log.csv")
    assert r.exit_code == 2 and "run file" in r.output
    r = run("export", "thermogram", tmp_path / "missing.csv", "--json")
    assert r.exit_code == 2 and json.loads(r.output)["kind"] == "InputError"
