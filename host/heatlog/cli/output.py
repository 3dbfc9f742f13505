"""What every command shares: the ``--json`` flag and one way to print results."""

from __future__ import annotations

import dataclasses
import json
import math
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click
import numpy as np

json_option = click.option(
    "--json", "as_json", is_flag=True, help="Print one JSON object instead of text."
)


def jsonable(obj: Any) -> Any:
    """Turn numpy values, dataclasses and paths into plain JSON; NaN and inf become null."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return jsonable(dataclasses.asdict(obj))
    if hasattr(obj, "to_dict") and callable(obj.to_dict):
        return jsonable(obj.to_dict())
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [jsonable(v) for v in obj.tolist()]
    if isinstance(obj, np.generic):
        return jsonable(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, Path):
        return str(obj)
    return obj


def emit(as_json: bool, payload: dict[str, Any], text: str | Callable[[], str]) -> None:
    """Print ``payload`` as JSON when asked, otherwise the human-readable ``text``."""
    if as_json:
        click.echo(json.dumps(jsonable(payload), indent=2, allow_nan=False))
    else:
        click.echo(text() if callable(text) else text)
