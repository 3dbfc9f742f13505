"""``heatlog reduce``: JSON keys, text summary, and one-line errors (CliRunner + tmp_path)."""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.reduce.synthetic import Release, synthetic_run


def _csv(tmp_path, run, name="run.csv"):
    p = tmp_path / name
    rows = "\n".join(
        f"{t:.3f},{y:.6f}"
        for t, y in zip(run.thermogram.time_s, run.thermogram.temp_C, strict=True)
    )
    p.write_text("# invented data\ntime_s,temp_C\n" + rows + "\n")
    return p


def test_json_has_the_contract_keys(tmp_path, heater_then_reaction):
    p = _csv(tmp_path, heater_then_reaction)
    r = CliRunner().invoke(main, ["reduce", str(p), "--event", "1", "--json"])
    assert r.exit_code == 0, r.output
    d = json.loads(r.output)
    for key in (
        "delta_t_K",
        "u_delta_t_K",
        "U_delta_t_K",
        "event_start_s",
        "after_start_s",
        "method",
        "methods",
        "drift",
        "naive_delta_t_K",
        "budget",
        "events",
    ):
        assert key in d
    assert set(d["drift"]) >= {"model", "k_per_s", "T_inf_C"}
    assert len(d["events"]) == 2
    assert abs(d["delta_t_K"] + 4.0) <= d["U_delta_t_K"]
    assert d["U_delta_t_K"] == pytest.approx(2 * d["u_delta_t_K"])
    names = [c["name"] for c in d["budget"]["components"]]
    assert {"period boundaries", "method spread"} <= set(names)
    assert d["budget"]["standard_uncertainty"] == pytest.approx(d["u_delta_t_K"])


def test_text_summary_and_options(tmp_path, heater_then_reaction):
    p = _csv(tmp_path, heater_then_reaction)
    r = CliRunner().invoke(
        main,
        [
            "reduce",
            str(p),
            "--method",
            "dickinson",
            "--resolution",
            "0.001",
            "--event-start",
            "300",
            "--after-start",
            "700",
        ],
    )
    assert r.exit_code == 0, r.output
    assert "corrected ΔT = +" in r.output and "[dickinson]" in r.output
    assert "period boundaries" in r.output and "U(k=2)" in r.output
    assert "Caution" in r.output


def test_other_columns_and_iso_time(tmp_path):
    run = synthetic_run(dt_s=2.0, noise_K=0.002, duration_s=2000.0)
    stamps = np.datetime64("2026-03-01T10:00:00") + (run.thermogram.time_s * 1000).astype(
        "timedelta64[ms]"
    )
    p = tmp_path / "iso.csv"
    p.write_text(
        "when,probe\n"
        + "\n".join(
            f"{s},{y:.5f}" for s, y in zip(stamps.astype(str), run.thermogram.temp_C, strict=True)
        )
        + "\n"
    )
    r = CliRunner().invoke(
        main,
        ["reduce", str(p), "--time-col", "when", "--temp-col", "probe", "--iso-time", "--json"],
    )
    assert r.exit_code == 0, r.output
    assert abs(json.loads(r.output)["delta_t_K"] - 5.0) < 0.01


def _rows(n, start=0.0):
    return "".join(f"{start + i},{20 + 1e-3 * i}\n" for i in range(n))


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("", "empty"),
        ("time_s,temp_C\n0,20\n", "at least"),
        ("time_s,temp_C\n" + _rows(20) + "20,nan\n", "non-finite"),
        ("time_s,temp_C\n" + _rows(20) + "20,boiling\n", "non-numeric"),
        ("time_s,temp_C\n" + _rows(20) + "5,20\n", "increase strictly"),
        ("time_s,temp_C\n" + _rows(900), "no event found"),
    ],
    ids=["empty", "one-row", "nan", "text", "time-back", "no-event"],
)
def test_bad_input_is_one_line_and_nonzero(tmp_path, text, fragment):
    p = tmp_path / "bad.csv"
    p.write_text(text)
    r = CliRunner().invoke(main, ["reduce", str(p)])
    assert r.exit_code != 0
    assert r.output.startswith("Error: ") and r.output.count("\n") == 1
    assert fragment in r.output


@pytest.mark.parametrize(
    "start, fragment",
    [(20.0, "fore-period"), (1960.0, "after-period")],
    ids=["too-early", "too-late"],
)
def test_event_too_close_to_an_end(tmp_path, start, fragment):
    # below the stated minimum (heatlog.reduce.periods: 30 s and 12 readings)
    run = synthetic_run(
        releases=(Release(start, 2.0, 10.0),), duration_s=2000.0, dt_s=2.0, noise_K=0.005
    )
    r = CliRunner().invoke(main, ["reduce", str(_csv(tmp_path, run)), "--json"])
    assert r.exit_code == 2
    error = json.loads(r.output)  # with --json the error is one JSON object
    assert error["kind"] == "ReductionError" and fragment in error["error"]
    assert "would run" not in error["error"] and " -" not in error["error"].replace(" --", "")
