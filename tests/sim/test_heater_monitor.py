"""Electrical calibration from the logged heater power: the simulator's drifting heater (its
resistance rising as it warms, its supply running down) seen through the virtual INA226 that
the real firmware reads; the truth is what the thermal model put in (invented data)."""

from pathlib import Path

import pytest

from heatlog.demo import _write_probe
from heatlog.device.export import export_run
from heatlog.logformat import read_log
from heatlog.monitorlog import power_channels
from heatlog.runfile import run_file
from heatlog.sim import scenarios as sc
from heatlog.sim.board import VirtualBoard

WATER = '[[contents]]\nname = "water"\nmass_g = 150.0\nu_mass_g = 0.05\ncp = "water"\n'


@pytest.fixture(scope="module")
def calibration_csv(tmp_path_factory):
    out = tmp_path_factory.mktemp("heater")
    _write_probe(out)
    board = VirtualBoard(sc.SCENARIOS["calibration"], out / "flash", seed=11)
    run = board.log_run(2400.0)
    log_file = out / "flash" / "heatlog" / f"r{run:04d}.hlg"
    csv, meta = export_run(log_file, out / "probes", note="invented data: heater-monitor test")
    return out, csv, read_log(log_file)


def _run_file(out: Path, csv: Path, electrical: str) -> Path:
    p = csv.parent / f"cal-{abs(hash(electrical))}.toml"
    p.write_text(
        f'title = "invented data"\n[log]\nfile = "{csv.name}"\ntemp_col = "temp_C"\n\n'
        f"{WATER}\n[electrical]\n{electrical}\n",
        encoding="utf-8",
    )
    return p


def test_log_holds_the_monitor_beside_the_probe(calibration_csv):
    _, _, log = calibration_csv
    (pc,) = power_channels(log.header)
    assert (pc.monitor, pc.shunt_ohm, pc.bus_index, pc.shunt_index) == ("ina226", 0.1, 1, 2)
    assert log.header.channels[0].probe_id == sc.PROBE_ID


def test_logged_energy_recovers_c_cal_where_a_power_read_once_does_not(calibration_csv):
    out, csv, _ = calibration_csv
    logged = run_file(
        _run_file(
            out,
            csv,
            'monitor = "ina226"\nbus_col = "ch1_bus_V"\nshunt_col = "ch2_shunt_V"\n'
            "shunt_ohm = 0.1\nu_shunt_rel = 0.000577\n",
        )
    )
    he = logged.heater
    assert he is not None
    # the energy itself: the model's integral of I²R over the heating (invented truth)
    assert abs(he.budget.value - sc.HEATER.total_J) <= he.budget.expanded
    assert he.power_change_rel < -0.03  # the heater's power fell by more than 3 % while on
    c = logged.c_cal
    assert c is not None
    assert abs(c.value - sc.CUP_C_J_PER_K) <= c.expanded, (c.value, c.expanded)

    # the same run entered as a constant power read once at switch-on (0.2 % meter, u = 0.01 W)
    # and a heating time off a clock (300 s, u = 0.2 s): the drift is not in its budget
    p0 = he.power_first_W
    const = run_file(
        _run_file(
            out, csv, f"power_W = {p0:.4f}\nu_power_W = 0.01\nseconds = 300.0\nu_seconds = 0.2\n"
        )
    )
    cc = const.c_cal
    assert cc is not None
    assert abs(cc.value - sc.CUP_C_J_PER_K) > cc.expanded, (cc.value, cc.expanded)
    # the power rows of the logged budget are smaller than the constant entry's power row
    share = dict(zip([x.name for x in cc.components], cc.shares(), strict=True))
    logged_share = dict(zip([x.name for x in c.components], c.shares(), strict=True))
    power_rows = [v for k, v in logged_share.items() if "gain" in k or "shunt" in k]
    assert share["P"] > sum(power_rows)


def test_run_file_refuses_a_missing_monitor_column(calibration_csv):
    from heatlog.errors import InputError

    out, csv, _ = calibration_csv
    bad = _run_file(
        out, csv, 'monitor = "ina226"\nbus_col = "ch1_bus_V"\nshunt_col = "nope"\n'
        "shunt_ohm = 0.1\nu_shunt_rel = 0.001\n",
    )  # fmt: skip
    with pytest.raises(InputError, match="nope"):
        run_file(bad)
    half = _run_file(out, csv, 'monitor = "ina226"\nbus_col = "ch1_bus_V"\n')
    with pytest.raises(InputError, match="shunt_col"):
        run_file(half)


def test_calibrate_electrical_takes_the_energy_from_the_monitor_log(calibration_csv, tmp_path):
    import json

    from click.testing import CliRunner

    from heatlog.cli import main

    _, csv, _ = calibration_csv
    runner = CliRunner()
    red = runner.invoke(main, ["reduce", str(csv), "--json"])
    assert red.exit_code == 0, red.output
    rj = tmp_path / "reduce.json"
    rj.write_text(red.output, encoding="utf-8")
    args = ["calibrate", "electrical", "--monitor-log", str(csv), "--reduce-json", str(rj),
            "--water-g", "150", "--u-water-g", "0.05", "--temp", "22.5"]  # fmt: skip
    r = runner.invoke(main, [*args, "--shunt-ohm", "0.1", "--u-shunt-rel", "0.000577", "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    assert abs(d["value"] - sc.CUP_C_J_PER_K) <= 2 * d["standard_uncertainty"]
    assert d["heater_energy"]["monitor"] == "INA226"
    text = runner.invoke(main, [*args, "--shunt-ohm", "0.1", "--u-shunt-rel", "0.000577"])
    assert text.exit_code == 0 and "Heater energy ∫V·I dt" in text.output, text.output
    # every missing input named at once, one line, non-zero exit
    bad = runner.invoke(main, args)
    assert bad.exit_code != 0
    assert (
        "--shunt-ohm" in bad.output
        and "--u-shunt-rel" in bad.output
        and "Traceback" not in bad.output
    )
    wrong = runner.invoke(main, [*args, "--shunt-ohm", "0.1", "--u-shunt-rel", "0.001",
                                 "--bus-col", "volts"])  # fmt: skip
    assert wrong.exit_code != 0 and "volts" in wrong.output
