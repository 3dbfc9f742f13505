"""The command group itself: version, help, and user errors as one line."""

import click
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.errors import InputError


def test_version_and_help():
    r = CliRunner().invoke(main, ["--version"])
    assert r.exit_code == 0 and "heatlog" in r.output
    assert CliRunner().invoke(main, ["--help"]).exit_code == 0


def test_heatlog_error_becomes_one_line_and_nonzero_exit():
    @main.command("_boom", hidden=True)
    def boom() -> None:
        raise InputError("points.csv: need at least 3 calibration points, got 2")

    try:
        r = CliRunner().invoke(main, ["_boom"])
    finally:
        main.commands.pop("_boom")
    assert r.exit_code == 2
    assert r.output.strip() == "Error: points.csv: need at least 3 calibration points, got 2"
    assert r.exception is None or isinstance(r.exception, SystemExit)
    assert not isinstance(r.exception, click.ClickException)


def test_json_errors_are_one_object_on_stdout():
    import json

    @main.command("_boom_json", hidden=True)
    @click.option("--json", "as_json", is_flag=True)
    @click.option("--n", type=int, default=1)
    def boom(as_json: bool, n: int) -> None:
        raise InputError("points.csv: need at least 3 calibration points, got 2")

    try:
        r = CliRunner().invoke(main, ["_boom_json", "--json"])
        bad = CliRunner().invoke(main, ["_boom_json", "--json", "--n", "many"])
        plain = CliRunner().invoke(main, ["_boom_json"])
    finally:
        main.commands.pop("_boom_json")
    assert r.exit_code == 2
    assert json.loads(r.output) == {
        "error": "points.csv: need at least 3 calibration points, got 2",
        "kind": "InputError",
    }
    assert bad.exit_code == 2
    error = json.loads(bad.output)
    assert error["kind"] == "BadParameter" and "many" in error["error"]
    assert plain.output.startswith("Error: ")  # without --json: the one text line


def test_json_error_of_a_real_command(tmp_path):
    import json

    missing = tmp_path / "missing.csv"
    r = CliRunner().invoke(main, ["reduce", str(missing), "--json"])
    assert r.exit_code != 0
    error = json.loads(r.output)
    assert set(error) == {"error", "kind"} and "missing.csv" in error["error"]
