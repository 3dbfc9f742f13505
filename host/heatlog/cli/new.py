"""``heatlog new KIND PATH``: a commented run-file template of each kind, ready to fill in."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError

# kind → (template file in heatlog/data/templates, what it is for, the command that evaluates it)
KINDS = {
    "cup": ("cup.toml", "a cup run that measures a sample", "heatlog reduce"),
    "calibration": ("calibration.toml", "an electrical calibration of the cup", "heatlog reduce"),
    "profile": ("profile.toml", "a long-run heat profile in an insulated box", "heatlog profile"),
}


def template_text(kind: str) -> str:
    """The commented template of ``kind`` (one of :data:`KINDS`)."""
    name = KINDS[kind][0]
    return (resources.files("heatlog") / "data" / "templates" / name).read_text(encoding="utf-8")


@click.command("new")
@click.argument("kind", type=click.Choice(sorted(KINDS)))
@click.argument("path", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--force", is_flag=True, help="Overwrite PATH if it exists.")
@json_option
def new(kind: str, path: Path, force: bool, as_json: bool) -> None:
    """Write a commented run-file template of KIND (cup, calibration, profile) to PATH.

    Every key is explained in the file; replace the values marked EDIT and run the command named
    at its top. docs/GUIDE.md describes every run-file and probe-file key.
    """
    if path.suffix.lower() != ".toml":
        raise InputError(f"{path}: run files end in .toml; give a name such as {path.stem}.toml")
    if path.exists() and not force:
        raise InputError(f"{path} exists; choose another name or add --force to overwrite it")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(template_text(kind), encoding="utf-8")
    except OSError as exc:
        raise InputError(f"{path}: cannot write ({exc.strerror})") from None
    _, what, command = KINDS[kind]
    payload = {"kind": kind, "path": str(path), "next": f"{command} {path}"}
    emit(
        as_json,
        payload,
        f"wrote {path}: {what}. Replace the values marked EDIT, then run `{command} {path}`.",
    )
