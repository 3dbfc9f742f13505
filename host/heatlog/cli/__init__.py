"""The ``heatlog`` command: one click group, thin subcommands, every one with ``--json``.

Each area of the package keeps its commands in a module here (``probe.py``, ``reduce.py``, ...)
and is listed in :data:`COMMANDS` (name → ``"module:attribute"`` and the one-line help shown by
``heatlog --help``). Only the command that runs is imported, so ``heatlog --version`` and
``heatlog --help`` import neither numpy nor scipy; ``tests/test_cli_lazy.py`` checks that every
entry imports, is a click command of that name, and that its help line matches the table.

A :class:`~heatlog.errors.HeatlogError` raised anywhere below a command ends as one line on
stderr and a non-zero exit code, never a traceback; with ``--json`` on the command line the
same error is one JSON object ``{"error": message, "kind": ...}`` on stdout instead.
"""

from __future__ import annotations

import importlib
import sys
from typing import Any, NoReturn

import click

from heatlog import __version__
from heatlog.errors import HeatlogError

# name → ("heatlog.cli.<module>:<attribute>", the command's first help sentence).
# Adding a command or group is one row here; the help text must equal the first sentence of
# the command's own help (tests/test_cli_lazy.py says which row drifted).
COMMANDS: dict[str, tuple[str, str]] = {
    "probe": (
        "heatlog.cli.probe:probe",
        "Probe models: calibration fits, conversions and divider design.",
    ),
    "reduce": (
        "heatlog.cli.reduce:reduce",
        "Corrected temperature change (with uncertainty) of one event in FILE.",
    ),
    "calibrate": (
        "heatlog.cli.energetics:calibrate",
        "Find the calorimeter's own heat capacity (C_cal, J/K) with an uncertainty budget.",
    ),
    "export": (
        "heatlog.cli.export:export",
        "Write results as CSV (units in the column names) for a spreadsheet.",
    ),
    "hess": (
        "heatlog.cli.energetics:hess",
        "Predict a reaction's standard enthalpy (298.15 K) by Hess's law from the cited table.",
    ),
    "compare": (
        "heatlog.cli.compare:compare",
        "Compare several runs in one HTML page: an overlay plot and a table of key figures.",
    ),
    "demo": (
        "heatlog.cli.demo:demo",
        "Simulate a board, pull its runs and measure a dissolution enthalpy (invented data).",
    ),
    "profile": (
        "heatlog.cli.profile:profile",
        "Cumulative heat Q(t), rate P(t), metrics, safety flags (and maturity for cement) of a long "
        "run in FILE (CSV), or as a run file RUN.toml with a [profile] table describes it.",
    ),
    "ports": ("heatlog.cli.device:ports", "List serial ports; boards heatlog knows are marked."),
    "status": (
        "heatlog.cli.device:status",
        "Identify the board: firmware, clock, free space, runs.",
    ),
    "clock": (
        "heatlog.cli.device:clock",
        "Set the board's clock from this computer's UTC clock; report its previous offset.",
    ),
    "start": (
        "heatlog.cli.device:start",
        "Start a new run (set the clock first with `heatlog clock`).",
    ),
    "stop": ("heatlog.cli.device:stop", "Stop the active run."),
    "pull": (
        "heatlog.cli.device:pull_cmd",
        "Download runs, verify them (chunk CRC + whole-run CRC-32) and archive them read-only.",
    ),
    "erase": (
        "heatlog.cli.device:erase_cmd",
        "Erase RUN on the board, only if the archive holds an identical verified copy.",
    ),
    "watch": (
        "heatlog.cli.device:watch",
        "Show live readings (raw and, with --probes, calibrated) until Ctrl-C, --seconds or --count.",
    ),
    "sim": (
        "heatlog.cli.device:sim",
        "Run a virtual board (the real firmware) until stopped: on a pseudo-terminal linked at "
        "--link (Linux, macOS), or on a local TCP socket with --tcp (any system).",
    ),
    "probes": (
        "heatlog.cli.archive:probes",
        "Probe calibrations in the archive (a newer one supersedes for runs from its date on).",
    ),
    "runs": (
        "heatlog.cli.archive:runs",
        "Runs in the archive: import, list, show, export, reduce, re-reduce.",
    ),
    "box": (
        "heatlog.cli.box:box",
        "Characterise an insulated box: heat capacity C and heat-loss coefficient G.",
    ),
    "new": (
        "heatlog.cli.new:new",
        "Write a commented run-file template of KIND (cup, calibration, profile) to PATH.",
    ),
    "board": (
        "heatlog.cli.board:board",
        "Install the firmware on a board; write and check its config.",
    ),
    "report": (
        "heatlog.cli.report:report",
        "Write a self-contained HTML report of RUN: a run file (TOML) or a CSV log (reduction only).",
    ),
}


def load_command(name: str) -> click.Command:
    """Import the module behind ``COMMANDS[name]`` and return its click command."""
    target, _ = COMMANDS[name]
    module_name, attr = target.split(":")
    command = getattr(importlib.import_module(module_name), attr)
    if not isinstance(command, click.Command):
        raise TypeError(f"{target} is not a click command")
    return command


class _UserError(click.ClickException):
    def __init__(self, message: str, exit_code: int) -> None:
        super().__init__(message)
        self.exit_code = exit_code  # type: ignore[misc]  # click declares it on the class


def error_kind(exc: BaseException) -> str:
    """The ``kind`` of a JSON error: the error class, e.g. ``InputError``, ``UsageError``."""
    return type(exc).__name__


def _json_error(ctx: click.Context, message: str, kind: str, exit_code: int) -> NoReturn:
    import json  # only for --json (a plain run need not load it)

    click.echo(json.dumps({"error": message, "kind": kind}))
    ctx.exit(exit_code)


class _Group(click.Group):
    """The top group: loads commands on first use and turns user errors into one clean line."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(set(COMMANDS) | set(self.commands))

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name in self.commands:
            return self.commands[cmd_name]
        if cmd_name not in COMMANDS:
            return None
        command = load_command(cmd_name)
        self.commands[cmd_name] = command
        return command

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        # The listing from the table: `heatlog --help` imports no command module.
        names = [n for n in self.list_commands(ctx) if n in COMMANDS or not self.commands[n].hidden]
        if not names:
            return
        limit = formatter.width - 6 - max(len(n) for n in names)
        rows = []
        for name in names:
            if name in self.commands:
                rows.append((name, self.commands[name].get_short_help_str(limit)))
            else:
                stand_in = click.Command(name, help=COMMANDS[name][1])  # click's own shortening
                rows.append((name, stand_in.get_short_help_str(limit)))
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        ctx.meta["heatlog.json"] = "--json" in args
        return super().parse_args(ctx, args)

    def main(self, *args: Any, **kwargs: Any) -> Any:
        # A narrow output encoding (cp1252, ascii) gets ASCII spellings, never a traceback.
        from heatlog.cli.asciitext import narrow_streams

        with narrow_streams():
            return super().main(*args, **kwargs)

    def invoke(self, ctx: click.Context) -> Any:
        as_json = ctx.meta.get("heatlog.json", False)
        try:
            return super().invoke(ctx)
        except HeatlogError as exc:
            if as_json:
                _json_error(ctx, str(exc), error_kind(exc), exc.exit_code)
            raise _UserError(str(exc), exc.exit_code) from None
        except click.ClickException as exc:
            if as_json and not isinstance(exc, _UserError):
                _json_error(ctx, exc.format_message(), error_kind(exc), exc.exit_code)
            raise


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="heatlog")
def main() -> None:
    """Probe calibration, thermogram reduction and calorimetry energetics for heatlog loggers."""


def run() -> None:
    """The ``heatlog`` console script (``[project.scripts]``, and ``python -m heatlog``): ``main``
    in a process of its own.

    The named command's modules are imported first with the cyclic garbage collector paused, and
    what is then alive is frozen (``gc.freeze``): the tens of thousands of import-time objects
    (functions, classes, tables) live until the process ends, so no collection needs to look at
    them again, the full one at exit included. That is about 10 ms of every command's run
    (``bench/bench_startup.py``); objects the command itself creates are collected as usual.
    ``main`` alone (as tests call it) leaves the collector as it is.
    """
    import gc

    name = sys.argv[1] if len(sys.argv) > 1 else ""
    if name in COMMANDS and name not in main.commands:
        gc.disable()
        try:
            main.commands[name] = load_command(name)
        finally:
            gc.freeze()
            gc.enable()
    main()
