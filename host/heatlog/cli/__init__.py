"""The ``heatlog`` command: one click group, thin subcommands, every one with ``--json``.

Each area of the package keeps its commands in a module here (``probe.py``, ``reduce.py``, ...)
and is registered in :func:`_register`. A :class:`~heatlog.errors.HeatlogError` raised anywhere
below a command ends as one line on stderr and a non-zero exit code, never a traceback.
"""

from __future__ import annotations

import importlib
from typing import Any

import click

from heatlog import __version__
from heatlog.errors import HeatlogError


class _UserError(click.ClickException):
    def __init__(self, message: str, exit_code: int) -> None:
        super().__init__(message)
        self.exit_code = exit_code


class _Group(click.Group):
    """A group that turns user errors into one clean line."""

    def main(self, *args: Any, **kwargs: Any) -> Any:
        # A narrow output encoding (cp1252, ascii) gets ASCII spellings, never a traceback.
        from heatlog.cli.asciitext import narrow_streams

        with narrow_streams():
            return super().main(*args, **kwargs)

    def invoke(self, ctx: click.Context) -> object:
        try:
            return super().invoke(ctx)
        except HeatlogError as exc:
            raise _UserError(str(exc), exc.exit_code) from None


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="heatlog")
def main() -> None:
    """Probe calibration, thermogram reduction and calorimetry energetics for heatlog loggers."""


# Modules under heatlog.cli that define one click command or group named like the module.
_COMMAND_MODULES: tuple[tuple[str, str], ...] = (
    ("probe", "probe"),
    ("reduce", "reduce"),
    ("energetics", "calibrate"),
    ("energetics", "hess"),
    ("demo", "demo"),
    ("profile", "profile"),
    ("device", "ports"),
    ("device", "status"),
    ("device", "clock"),
    ("device", "start"),
    ("device", "stop"),
    ("device", "pull_cmd"),
    ("device", "erase_cmd"),
    ("device", "watch"),
    ("device", "sim"),
    ("archive", "probes"),
    ("archive", "runs"),
    ("report", "report"),
)


def _register() -> None:
    for module_name, attr in _COMMAND_MODULES:
        module = importlib.import_module(f"heatlog.cli.{module_name}")
        main.add_command(getattr(module, attr))


_register()
