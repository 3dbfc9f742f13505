"""Every hint is checked against the situation it is printed in: an option it suggests exists on
the command that printed it, a file hint fits a file being added (not one the archive recorded),
and guide and summary lines do not say the same thing twice. One test per message family."""

import json
import re

import click
import numpy as np
from click.testing import CliRunner

from heatlog.cli import load_command, main
from heatlog.reduce.reduction import _pair
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.report.guide import GuideOptions, LiveGuide, render_terminal


def _options_of(command: click.Command) -> set[str]:
    return {o for p in command.params for o in getattr(p, "opts", []) if o.startswith("--")}


def assert_hinted_options_exist(name: str, message: str) -> None:
    hinted = set(re.findall(r"--[a-z][a-z-]+", message))
    missing = hinted - _options_of(load_command(name))
    assert not missing, f"`heatlog {name}` suggests {missing} it does not have: {message}"


def _early_event_csv(tmp_path):
    run = synthetic_run(
        releases=(Release(60.0, 2.0, 10.0),), duration_s=2000.0, dt_s=2.0, noise_K=0.005
    )
    p = tmp_path / "early.csv"
    rows = "\n".join(
        f"{t:.3f},{y:.6f}"
        for t, y in zip(run.thermogram.time_s, run.thermogram.temp_C, strict=True)
    )
    p.write_text("time_s,temp_C\n" + rows + "\n", encoding="utf-8")
    return p


def test_period_hints_name_what_each_command_accepts(tmp_path):
    csv = _early_event_csv(tmp_path)
    toml = tmp_path / "early.toml"
    toml.write_text('title = "invented"\n[log]\nfile = "early.csv"\n', encoding="utf-8")
    for args in (["reduce", str(csv)], ["report", str(csv)]):
        r = CliRunner().invoke(main, args)
        assert r.exit_code == 2 and "--event-start" in r.output, r.output
        assert_hinted_options_exist(args[0], r.output)
    for args in (["reduce", str(toml)], ["report", str(toml)]):
        r = CliRunner().invoke(main, args)
        assert r.exit_code == 2, r.output
        assert "--event-start" not in r.output, r.output
        assert "set event_start_s in the [reduce] table of early.toml" in r.output
    # the report's own period options work on a CSV log
    r = CliRunner().invoke(
        main,
        ["report", str(csv), "--event-start", "60", "--after-start", "150", "--json"],
    )
    assert "fore-period" in json.loads(r.output)["error"]  # honest: 60 s is still too short


def test_a_missing_file_to_add_says_check_the_path_not_reimport(tmp_path, monkeypatch):
    monkeypatch.setenv("HEATLOG_DB", str(tmp_path / "a.sqlite"))
    r = CliRunner().invoke(main, ["probes", "add", str(tmp_path / "missing.toml")])
    assert r.exit_code != 0 and "not found" in r.output
    assert "re-import" not in r.output and "check the path" in r.output


def test_an_empty_points_file_names_the_columns_the_command_reads(tmp_path):
    empty = tmp_path / "points.csv"
    empty.write_text("", encoding="utf-8")
    r = CliRunner().invoke(main, ["probe", "fit", str(empty), "--model", "beta"])
    assert r.exit_code == 2 and "time_s" not in r.output
    assert "temp_C" in r.output and "resistance_ohm" in r.output, r.output


def _points(tmp_path, name):
    from heatlog.probes.thermistor import Beta

    beta = Beta(R25=10_000.0, beta=3950.0)
    temps = np.arange(0.0, 61.0, 5.0)
    rows = "\n".join(f"{t:g},{float(beta.temperature_to_resistance(t)):.4f}" for t in temps)
    p = tmp_path / name
    p.write_text("temp_C,resistance_ohm\n" + rows + "\n", encoding="utf-8")
    return p


def test_probe_ids_take_any_alphabet_and_a_bad_one_points_to_id(tmp_path):
    out = tmp_path / "p.toml"
    ok = CliRunner().invoke(
        main,
        ["probe", "fit", str(_points(tmp_path, "Fühler-é1.csv")), "--model", "beta",
         "--reference", "invented reference", "--out", str(out), "--json"],
    )  # fmt: skip
    assert ok.exit_code == 0, ok.output
    assert 'id = "Fühler-é1"' in out.read_text(encoding="utf-8")
    bad = CliRunner().invoke(
        main,
        ["probe", "fit", str(_points(tmp_path, "my points.csv")), "--model", "beta",
         "--reference", "invented reference", "--out", str(out)],
    )  # fmt: skip
    assert bad.exit_code == 2 and "--id" in bad.output and "my points.csv" in bad.output
    assert "--id" in _options_of(load_command("probe").commands["fit"])


def test_two_uncertainties_never_read_alike():
    assert _pair(0.1301, 0.1349) == "0.13 K vs 0.135 K"
    assert _pair(0.13, 0.25) == "0.13 K vs 0.25 K"
    assert _pair(0.13, 0.13) == "0.13 K vs 0.13 K"  # equal values may read alike


def test_guide_lines_do_not_repeat_themselves():
    run = synthetic_run(
        releases=(Release(900.0, 1.0, 30.0),), duration_s=2400.0, dt_s=2.0, k_per_s=3e-4,
        noise_K=0.002, resolution_K=0.001, seed=3,
    )  # fmt: skip
    guide = LiveGuide(GuideOptions(reduce_every_s=20.0))
    seen = set()
    for t, y in zip(run.thermogram.time_s, run.thermogram.temp_C, strict=True):
        state = guide.feed(t, y)
        status = render_terminal(guide.time_s, guide.temp_C, state).splitlines()
        line = next(s for s in status if s.startswith("["))
        phase, rest = line[1:].split("] ", 1)
        assert not rest.lower().startswith(phase), line  # no "[settling] settling: ..."
        words = rest.lower().split()
        assert all(a != b for a, b in zip(words, words[1:], strict=False)), line
        seen.add(phase)
    assert {"settling", "stable", "after"} <= seen


def test_profile_threshold_never_reached_reads_so(tmp_path):
    from heatlog.cli.profile import _text  # noqa: F401  (the line is built there)

    t = np.arange(0.0, 7200.0, 60.0)
    y = 20.0 + 5.0 * (1 - np.exp(-t / 900.0))
    p = tmp_path / "warm.csv"
    p.write_text(
        "time_s,temp_C\n" + "\n".join(f"{a:g},{b:.4f}" for a, b in zip(t, y, strict=True)) + "\n",
        encoding="utf-8",
    )
    r = CliRunner().invoke(
        main,
        ["profile", str(p), "--heat-capacity", "100", "--u-heat-capacity", "5",
         "--loss", "0.05", "--u-loss", "0.005", "--env-temp", "20", "--threshold", "60"],
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    assert "reached after never" not in r.output and "never reached" in r.output
