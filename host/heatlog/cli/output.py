"""What every command shares: the ``--json`` flag and one way to print results."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from heatlog.plainjson import jsonable  # re-exported: `from heatlog.cli.output import jsonable`

__all__ = ["emit", "json_option", "jsonable"]

json_option = click.option(
    "--json", "as_json", is_flag=True, help="Print one JSON object instead of text."
)


def emit(as_json: bool, payload: dict[str, Any], text: str | Callable[[], str]) -> None:
    """Print ``payload`` as JSON when asked, otherwise the human-readable ``text``."""
    if as_json:
        import json  # only for --json (a plain run need not load it)

        click.echo(json.dumps(jsonable(payload), indent=2, allow_nan=False))
    else:
        click.echo(text() if callable(text) else text)
