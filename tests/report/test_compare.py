"""`heatlog compare` on the demo's cup runs (invented data): one page, both runs, their figures."""

import json

from click.testing import CliRunner

from heatlog.cli import main


def test_two_cup_runs_of_the_demo(demo, tmp_path):
    out = tmp_path / "cmp.html"
    r = CliRunner().invoke(
        main,
        ["compare", str(demo.out / "calibration.toml"), str(demo.out / "dissolution.toml"),
         "--out", str(out), "--json"],
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    cal, run = d["runs"]
    assert cal["figures"]["corrected ΔT"].startswith("+")  # the heater warms the cup
    assert run["figures"]["corrected ΔT"].startswith("-")  # the salt cools it
    assert f"{demo.run.reduction.delta_t_K:+.5f} K" in run["figures"]["corrected ΔT"]
    assert "ΔH per gram" in run["figures"] and "C_cal" in cal["figures"]
    page = out.read_text(encoding="utf-8")
    assert page.count("<img") == 1 and "Key figures" in page and "Caution" in page


def test_mixed_kinds_and_single_runs_are_refused(demo, tmp_path):
    one = CliRunner().invoke(main, ["compare", str(demo.out / "calibration.toml")])
    assert one.exit_code == 2 and "at least two" in one.output
    prof = tmp_path / "p.toml"
    prof.write_text(
        f'[log]\nfile = "{(demo.out / "calibration.toml").as_posix()}"\n'
        "[profile]\nheat_capacity_J_per_K = 500.0\nloss_W_per_K = 0.1\nenv_temp_C = 21.0\n",
        encoding="utf-8",
    )
    mixed = CliRunner().invoke(main, ["compare", str(demo.out / "calibration.toml"), str(prof)])
    assert mixed.exit_code == 2, mixed.output
