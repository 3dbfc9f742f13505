"""Complete help: every command and option of the click tree says what it is for, and the help
text does not point to places that are not there."""

import click
from click.testing import CliRunner

from heatlog.cli import COMMANDS, load_command, main


def _walk(command: click.Command, path: list[str]):
    yield path, command
    if isinstance(command, click.Group):
        for name, sub in command.commands.items():
            yield from _walk(sub, [*path, name])


def _tree():
    for name in COMMANDS:
        yield from _walk(load_command(name), [name])


def test_every_command_and_option_has_help():
    missing = []
    for path, command in _tree():
        if not command.help and not command.hidden:
            missing.append(" ".join(path) + " (the command)")
        for param in command.params:
            if (
                isinstance(param, click.Option)
                and not param.hidden
                and not (param.help or "").strip()
            ):
                missing.append(f"{' '.join(path)} {'/'.join(param.opts)}")
    assert not missing, f"options without help: {missing}"


def test_help_that_points_to_options_points_the_right_way():
    # click lists a command's options after its description: "above" would send readers up
    for path, _command in _tree():
        text = CliRunner().invoke(main, [*path, "--help"]).output
        assert "options above" not in text, " ".join(path)


def test_calibrate_electrical_lists_every_missing_input_at_once():
    r = CliRunner().invoke(main, ["calibrate", "electrical", "--voltage", "12", "--seconds", "300"])
    assert r.exit_code == 2
    line = r.output.strip()
    assert len(line.splitlines()) == 1
    for name in (
        "--current",
        "--u-voltage",
        "--u-current",
        "--u-seconds",
        "--delta-t",
        "--u-delta-t",
    ):
        assert name in line, name
    none = CliRunner().invoke(main, ["calibrate", "electrical"]).output
    assert "--power-log" in none and "--delta-t" in none and "--u-seconds" in none
