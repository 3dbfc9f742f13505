"""Run files: parsing errors, and evaluation against invented runs with a known answer."""

from pathlib import Path

import numpy as np
import pytest

from heatlog.energetics.water import water_cp
from heatlog.errors import InputError
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.runfile import load_run, run_file


def _write_log(path: Path, t: np.ndarray, y: np.ndarray) -> None:
    lines = ["# invented data", "time_s,temp_C"] + [
        f"{a:.2f},{b:.5f}" for a, b in zip(t, y, strict=True)
    ]
    path.write_text("\n".join(lines) + "\n")


WATER = '[[contents]]\nname = "water"\nmass_g = 200.0\nu_mass_g = 0.05\ncp = "water"\n'


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("title = 'x'\n", "[log] needs file"),
        ("[log]\nfile = 'a.csv'\nraw_col = 'counts'\n", "needs probe"),
        ("[log]\nfile = 'a.csv'\n[reduce]\nmetod = 'auto'\n", "does not know"),
        (
            "[log]\nfile = 'a.csv'\n[calorimeter]\nheat_capacity_J_per_K = 40.0\n"
            "[electrical]\npower_W = 1.0\nseconds = 1.0\n[sample]\nmass_g = 1.0\n",
            "not both",
        ),
        (
            "[log]\nfile = 'a.csv'\n[sample]\nmass_g = 1.0\n",
            "needs heat_capacity_J_per_K or calibrations",
        ),
        ("[log]\nfile = 'a.csv'\n[electrical]\nseconds = 10.0\n", "give power_W"),
        (
            "[log]\nfile = 'a.csv'\n[[contents]]\nname = 'water'\nmass_g = 'lots'\n",
            "must be a number",
        ),
        ("[log\nfile = 'a.csv'\n", "not valid TOML"),
    ],
    ids=[
        "no-log",
        "raw-no-probe",
        "reduce-key",
        "both",
        "no-constant",
        "no-power",
        "text-mass",
        "toml",
    ],
)
def test_bad_run_files_end_in_one_clear_line(tmp_path, text, fragment):
    p = tmp_path / "run.toml"
    p.write_text(text)
    with pytest.raises(InputError) as err:
        load_run(p)
    assert fragment in str(err.value)
    assert "\n" not in str(err.value)


def test_missing_run_file_is_a_clean_error(tmp_path):
    with pytest.raises(InputError, match="no such run file"):
        load_run(tmp_path / "nope.toml")


def _calorimeter_runs(tmp_path: Path, c_cal: float, dh_kj: float, seed: int) -> tuple[Path, float]:
    """An electrical calibration and a KCl dissolution (invented) in the same cup."""
    cp = float(water_cp(21.0))
    c_tot = c_cal + 200.0 * cp
    cal = synthetic_run(
        releases=(Release(500.0, 1800.0 / c_tot, 360.0, kind="heater"),),
        duration_s=2600.0,
        dt_s=2.0,
        k_per_s=3e-4,
        jacket_C=21.5,
        start_C=20.5,
        noise_K=0.002,
        probe_lag_s=2.0,
        seed=seed,
    )
    _write_log(tmp_path / "cal.csv", cal.thermogram.time_s, cal.thermogram.temp_C)
    (tmp_path / "cal.toml").write_text(
        "title = 'invented calibration'\n[log]\nfile = 'cal.csv'\n"
        f"{WATER}[electrical]\nvoltage_V = 12.0\nu_voltage_V = 0.005\ncurrent_A = 0.41666667\n"
        "u_current_A = 0.0002\nseconds = 360.0\nu_seconds = 0.2\n"
    )
    n = 5.0 / 74.551  # 5 g KCl
    c_run = c_tot + 5.0 * 0.69
    run = synthetic_run(
        releases=(Release(420.0, -n * dh_kj * 1e3 / c_run, 25.0),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=3e-4,
        jacket_C=21.5,
        start_C=21.0,
        noise_K=0.002,
        probe_lag_s=2.0,
        seed=seed + 1,
    )
    _write_log(tmp_path / "run.csv", run.thermogram.time_s, run.thermogram.temp_C)
    (tmp_path / "run.toml").write_text(
        "title = 'invented KCl dissolution'\n[log]\nfile = 'run.csv'\n"
        "[calorimeter]\ncalibrations = ['cal.toml']\n"
        f"{WATER}[[contents]]\nname = 'KCl'\nmass_g = 5.0\nu_mass_g = 0.001\ncp = 0.69\nu_cp = 0.02\n"
        "[sample]\nname = 'KCl'\nmass_g = 5.0\nu_mass_g = 0.001\nreaction = 'KCl(s) -> K+(aq) + Cl-(aq)'\n"
    )
    return tmp_path / "run.toml", c_cal


def test_calibration_then_dissolution_recovers_the_invented_truth(tmp_path):
    run_path, c_cal = _calorimeter_runs(tmp_path, c_cal=35.0, dh_kj=17.2, seed=5)
    cal = run_file(tmp_path / "cal.toml")
    assert cal.c_cal is not None
    assert abs(cal.c_cal.value - c_cal) <= cal.c_cal.expanded
    res = run_file(run_path)
    assert res.molar is not None and res.hess is not None
    assert abs(res.molar.value - 17.2) <= res.molar.expanded
    assert res.molar.u > 0
    d = res.to_dict()
    for key in (
        "delta_t_K",
        "u_delta_t_K",
        "heat_J",
        "u_heat_J",
        "enthalpy_kJ_per_mol",
        "u_enthalpy_kJ_per_mol",
        "enthalpy_J_per_g",
        "hess",
    ):
        assert key in d
    # The dissolution cools the cup, so the heat taken up is negative and ΔH positive.
    assert d["heat_J"] < 0 < d["enthalpy_kJ_per_mol"]


def test_calibration_loop_is_refused(tmp_path):
    t = np.arange(0, 100.0)
    _write_log(tmp_path / "a.csv", t, 20 + 0 * t)
    (tmp_path / "a.toml").write_text(
        "[log]\nfile = 'a.csv'\n[calorimeter]\ncalibrations = ['a.toml']\n"
        "[sample]\nmass_g = 1.0\nmolar_mass_g_per_mol = 10.0\n"
    )
    with pytest.raises(InputError):
        run_file(tmp_path / "a.toml")


def test_water_cp_shared_with_the_calibration_is_one_input_and_cancels(tmp_path):
    # Same 200 g of water in calibration and run: C_cal = Q/ΔT_cal − m·c_p, so
    # q = (m·c_p + C_cal + m_s·c_s)·ΔT = (Q/ΔT_cal + m_s·c_s)·ΔT does not depend on c_p(water)
    # (JCGM 100, 5.1: one input quantity, one row with the summed sensitivity).
    run_path, _ = _calorimeter_runs(tmp_path, c_cal=35.0, dh_kj=17.2, seed=9)
    res = run_file(run_path)
    rows = {c.name: c for c in res.molar.components}
    assert [n for n in rows if n == "c_p(water)"] == ["c_p(water)"]
    assert rows["c_p(water)"].contribution < 1e-6 * res.molar.u
    # the two temperature rises enter by their own parts, kept apart
    assert "calibration: period boundaries" in rows and "period boundaries" in rows
    assert any(n.startswith("calibration: ") and "V" in n for n in rows)  # heater voltage


def test_missing_species_warns_beside_the_measured_enthalpy(tmp_path):
    # A reaction the tables cannot predict costs the prediction, not the measured result;
    # a user's cited rows (run-file key formation_table) then supply it through the one loader.
    run_path, _ = _calorimeter_runs(tmp_path, c_cal=35.0, dh_kj=17.2, seed=5)
    text = run_path.read_text(encoding="utf-8")
    run_path.write_text(text.replace("KCl(s) -> K+(aq) + Cl-(aq)", "KCl(s) -> K+(aq) + Cl-(g)"))
    res = run_file(run_path)
    assert res.molar is not None and res.hess is None
    assert res.hess_warning is not None and "Cl-(g)" in res.hess_warning
    assert "hess_warning" in res.to_dict()
    (tmp_path / "mine.csv").write_text(
        "species,phase,dHf_kJ_per_mol,u_kJ_per_mol,source\n"
        'Cl-,g,-233.1,1.0,"invented test value"\n',
        encoding="utf-8",
    )
    run_path.write_text(run_path.read_text(encoding="utf-8") + "formation_table = 'mine.csv'\n")
    res = run_file(run_path)
    assert res.hess is not None and "no formation enthalpy" not in (res.hess_warning or "")
    assert res.to_dict()["hess"]["coverage_factor"] == 2
    (tmp_path / "mine.csv").write_text("species,phase\nCl-,g\n", encoding="utf-8")
    with pytest.raises(InputError, match="missing column"):
        run_file(run_path)


def test_enthalpy_states_its_temperature_and_moves_to_25c_with_the_given_delta_cp(tmp_path):
    run_path, _ = _calorimeter_runs(tmp_path, c_cal=35.0, dh_kj=17.2, seed=5)
    res = run_file(run_path)
    red = res.reduction
    t1 = float(red.drift.fore(red.event_start_s))
    # contents listed before the reaction (water + solid KCl): ΔH at the final temperature
    assert res.enthalpy_temp_C == pytest.approx(t1 + red.delta_t_K)
    assert "final temperature" in res.to_dict()["enthalpy_temperature_basis"]
    assert res.molar_25 is None and "no Kirchhoff step" in (res.hess_warning or "")
    text = run_path.read_text(encoding="utf-8")
    run_path.write_text(
        text
        + "contents_state = 'final'\ndelta_cp_J_per_mol_K = -148.0\nu_delta_cp_J_per_mol_K = 10.0\n"
    )
    res = run_file(run_path)
    assert res.enthalpy_temp_C == pytest.approx(t1)
    assert res.molar_25 is not None
    want = res.molar.value + (-148.0) * (25.0 - t1) * 1e-3  # Kirchhoff, ΔrCp constant
    assert res.molar_25.value == pytest.approx(want, rel=1e-9)
    assert res.hess is not None and res.hess.measured == pytest.approx(res.molar_25.value)
    names = {c.name for c in res.molar_25.components}
    assert "ΔCp" in names and "ΔT" not in names and "C_cal" not in names  # the rows are carried
    run_path.write_text(text + "contents_state = 'later'\n")
    with pytest.raises(InputError, match="contents_state"):
        run_file(run_path)
