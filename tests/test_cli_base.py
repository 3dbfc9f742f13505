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
