"""``heatlog report``: the HTML holds results, budgets, methods, provenance and cautions; user
strings are escaped; --json stdout stays clean while progress goes to stderr."""

import json
import re
import shutil

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.cli.report import StepProgress
from heatlog.profile.synthetic import warmer_run
from heatlog.report.html import ReportInputs, render_html
from heatlog.report.sources import write_report


def _report(args):
    r = CliRunner().invoke(main, ["report", *args])
    assert r.exit_code == 0, r.output + (r.stderr or "")
    return r


def test_run_file_report_holds_results_budgets_methods_and_provenance(demo, demo_points, tmp_path):
    out = tmp_path / "r.html"
    r = _report(
        [
            str(demo.out / "dissolution.toml"),
            "--out",
            str(out),
            "--probe-points",
            str(demo_points),
            "--json",
        ]
    )
    d = json.loads(r.stdout)  # stdout is one JSON object and nothing else
    assert d["report"] == str(out)
    text = out.read_text(encoding="utf-8")
    run = demo.run
    assert f"{run.reduction.delta_t_K:+.5f} K" in text
    assert f"{run.molar.value:+.3f} kJ/mol" in text
    assert d["result"]["delta_t_K"] == pytest.approx(run.reduction.delta_t_K)
    for name in (
        "ISO 1928 Annex C",
        "JCGM 100:2008",
        "IAPWS-95",
        "Steinhart–Hart equation",
        "Hess&#x27;s law",
        "ΔfH° source:",
    ):
        assert name in text, name
    # probe provenance from the probe file
    for item in ("demo-ntc-1", "2026-11-30", "invented reference thermometer", "A = ", "B = "):
        assert item in text, item
    # budgets: the ΔT budget and the molar enthalpy budget, each with its rows
    assert text.count("<h3>") >= 4
    assert "u_i(y)" in text and "share %" in text
    # figures are inline PNGs, and there are no external resources at all
    assert len(re.findall(r'src="data:image/png;base64,[A-Za-z0-9+/=]{1000,}"', text)) == 4
    assert not re.search(r'(src|href)="(https?:|//|file:)', text)
    assert "<link" not in text and "<script" not in text
    # cautions that apply: the salt and the general deferral
    assert "oxidiser" in text and "safety data sheet" in text


def test_user_strings_are_escaped(demo, tmp_path):
    toml = demo.out / "nasty.toml"
    src = (demo.out / "dissolution.toml").read_text(encoding="utf-8")
    src = re.sub(
        r'^title = ".*"$', 'title = "<script>alert(1)</script> & \\"Q\\""', src, flags=re.M
    )
    src = src.replace('name = "water"', 'name = "<b>water</b>"')
    toml.write_text(src, encoding="utf-8")
    out = tmp_path / "nasty.html"
    _report([str(toml), "--out", str(out)])
    text = out.read_text(encoding="utf-8")
    assert "<script>" not in text and "<b>water</b>" not in text
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;Q&quot;" in text
    assert "&lt;b&gt;water&lt;/b&gt;" in text


def test_csv_log_is_reduced_only(demo, tmp_path):
    from heatlog.runfile import read_run_log

    th = read_run_log(demo.run.spec.log)
    csv = tmp_path / "log.csv"
    np.savetxt(
        csv,
        np.column_stack([th.time_s, th.temp_C]),
        delimiter=",",
        header="time_s,temp_C",
        comments="",
        fmt="%.6f",
    )
    r = _report([str(csv), "--json"])
    d = json.loads(r.stdout)
    html = (tmp_path / "log.html").read_text(encoding="utf-8")
    assert d["result"]["delta_t_K"] == pytest.approx(demo.run.reduction.delta_t_K, abs=1e-4)
    assert "reduction only" in html and "No probe file" in html
    assert "kJ/mol" not in html


def test_profile_run_file_report(tmp_path):
    run = warmer_run()
    csv = tmp_path / "warmer.csv"
    np.savetxt(
        csv,
        np.column_stack([run.time_s, run.temp_C, run.env_C]),
        delimiter=",",
        header="time_s,temp_C,room_C",
        comments="",
        fmt="%.6f",
    )
    toml = tmp_path / "warmer.toml"
    toml.write_text(
        'title = "invented warmer"\n[log]\nfile = "warmer.csv"\n'
        '[profile]\nheat_capacity_J_per_K = 60.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.002\nenv_col = "room_C"\n'
        'kind = "warmer"\nsample_mass_g = 40.0\n'
    )
    d = json.loads(_report([str(toml), "--json"]).stdout)
    assert d["result"]["heat_J"] == pytest.approx(run.true_heat_J[-1], rel=0.01)
    html = (tmp_path / "warmer.html").read_text(encoding="utf-8")
    assert 'id="fig-profile"' in html and "EN 196-9" in html
    assert "burn" in html  # the warmer's contact-burn flags reach the report


def test_progress_goes_to_stderr_only(demo, tmp_path):
    out = tmp_path / "p.html"
    r = _report([str(demo.out / "dissolution.toml"), "--out", str(out), "--json", "--progress"])
    json.loads(r.stdout)
    assert "plotting the thermogram" in r.stderr
    quiet = _report([str(demo.out / "dissolution.toml"), "--out", str(out), "--json"])
    assert quiet.stderr == ""  # CliRunner's stderr is not a terminal: silent by default


def test_step_progress_reports_slow_steps(monkeypatch):
    import io

    clock = iter([0.0, 0.2, 0.2, 3.5])
    monkeypatch.setattr("heatlog.cli.report.time.perf_counter", lambda: next(clock))
    buf = io.StringIO()
    p = StepProgress(True, buf)
    p("fast")
    p("slow")
    p.close()
    lines = buf.getvalue().splitlines()
    assert lines == ["heatlog report: fast", "heatlog report: slow", "  … slow: 3.3 s"]


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["missing.toml"], "no such run file"),
        (["missing.csv"], "missing.csv"),
        (["log.csv", "--out", "no/such/folder/r.html"], "cannot write the report"),
        (["log.csv", "--probe-points", "log.csv"], "missing column"),
    ],
)
def test_one_line_errors(args, fragment, demo, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    from heatlog.runfile import read_run_log

    th = read_run_log(demo.run.spec.log)
    lines = ["time_s,temp_C"] + [
        f"{t:.1f},{y:.5f}" for t, y in zip(th.time_s, th.temp_C, strict=True)
    ]
    (tmp_path / "log.csv").write_text("\n".join(lines) + "\n")
    r = CliRunner().invoke(main, ["report", *args])
    assert r.exit_code != 0
    assert fragment in r.output and "Traceback" not in r.output
    assert len(r.output.strip().splitlines()) == 1


def test_write_report_of_a_run_result(demo, tmp_path):
    path = write_report(demo.run, tmp_path / "w.html")
    assert path.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")


def test_render_without_results_still_has_the_caution():
    text = render_html(ReportInputs(title="empty", source="nothing"))
    assert "safety data sheet" in text and shutil.which  # renders with no figures


def test_demo_writes_report(tmp_path):
    out = tmp_path / "demo"
    r = CliRunner().invoke(main, ["demo", "--out", str(out), "--json"])
    assert r.exit_code == 0, r.output
    html = (out / "report.html").read_text(encoding="utf-8")
    d = json.loads(r.stdout)
    assert f"{d['dissolution_run']['delta_t_K']:+.5f} K" in html
    assert 'id="fig-calibration"' in html and "do not reproduce" not in html


def test_points_that_do_not_match_the_probe_file_are_flagged(demo, demo_points, tmp_path):
    lines = demo_points.read_text(encoding="utf-8").splitlines()
    head = [i for i, line in enumerate(lines) if line.startswith("temp_C")][0]
    t, r = lines[head + 1].split(",")[:2]
    lines[head + 1] = f"{t},{float(r) * 1.01}"  # one point 1 % off
    points = tmp_path / "other.csv"
    points.write_text("\n".join(lines) + "\n", encoding="utf-8")
    out = tmp_path / "m.html"
    _report([str(demo.out / "dissolution.toml"), "--out", str(out), "--probe-points", str(points)])
    assert "do not reproduce the probe file" in out.read_text(encoding="utf-8")
