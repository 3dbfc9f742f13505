"""The lazy command table: every row imports, is the command it names, and lists its own help."""

import subprocess
import sys

import click
import pytest
from click.testing import CliRunner

from heatlog.cli import COMMANDS, load_command, main


@pytest.mark.parametrize("name", sorted(COMMANDS))
def test_every_row_is_the_command_it_names(name):
    command = load_command(name)
    assert isinstance(command, click.Command)
    assert command.name == name
    # The listing shows the table's line without importing; it must be the command's own.
    assert command.get_short_help_str(limit=10_000) == COMMANDS[name][1], (
        f"COMMANDS[{name!r}] help drifted from the command's docstring; copy its first sentence"
    )


def test_listing_matches_the_loaded_commands():
    lazy = CliRunner().invoke(main, ["--help"]).output
    ctx = click.Context(main)
    loaded = [load_command(n) for n in main.list_commands(ctx)]
    for command in loaded:
        assert command.name in lazy
    assert main.list_commands(ctx) == sorted(COMMANDS)


def _fresh(setup: str, call: str, report: str) -> str:
    """stdout of a new interpreter that runs ``setup``, then ``call`` (a heatlog entry point,
    which ends in SystemExit: its code in ``status``), then ``report``."""
    code = (
        f"{setup}\ntry:\n    {call}\n    status = 0\n"
        f"except SystemExit as exc:\n    status = exc.code\n{report}\n"
    )
    return subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout


def test_version_and_help_import_no_command_module():
    # A fresh interpreter: what `heatlog --help` imports must not include numpy or any command
    # (the output-encoding wrapper the group enters on every run is stdlib only, and allowed).
    out = _fresh(
        "import sys\nfrom heatlog.cli import main",
        "main(['--help'])",
        "heavy = sorted(m for m in sys.modules if m.split('.')[0] in ('numpy', 'scipy')"
        " or (m.startswith('heatlog.cli.') and m != 'heatlog.cli.asciitext'))\n"
        "print('HEAVY', heavy)",
    )
    assert "HEAVY []" in out, out
    assert "reduce" in out and "Commands:" in out


def test_unknown_command_is_a_usage_error():
    r = CliRunner().invoke(main, ["no-such-command"])
    assert r.exit_code == 2 and "No such command" in r.output


def test_console_script_freezes_the_imported_modules_and_keeps_collecting(tmp_path):
    # `heatlog` as installed runs heatlog.cli:run: the command's modules are imported with the
    # collector paused and then frozen; the collector must be on again for the command itself.
    from heatlog.reduce.synthetic import synthetic_run

    th = synthetic_run(noise_K=0.002, seed=3).thermogram
    path = tmp_path / "run.csv"
    rows = "\n".join(f"{a:.3f},{b:.5f}" for a, b in zip(th.time_s, th.temp_C, strict=True))
    path.write_text("time_s,temp_C\n" + rows + "\n")
    out = _fresh(
        f"import gc, sys\nfrom heatlog.cli import run\nsys.argv = ['heatlog', 'reduce', {str(path)!r}]",
        "run()",
        "print('STATE', gc.isenabled(), gc.get_freeze_count() > 1000, status)",
    )
    assert "corrected ΔT" in out, out
    assert "STATE True True 0" in out, out
    version = subprocess.run(
        [sys.executable, "-m", "heatlog", "--version"], capture_output=True, text=True, check=True
    ).stdout
    assert "heatlog" in version
