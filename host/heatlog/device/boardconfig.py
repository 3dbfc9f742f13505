"""Board configs for the wiring variants of hardware/wiring.md, and their check on the host.

`new_config` builds `/heatlog/config.json` for one or more variants (`divider`: a thermistor
divider on the on-chip ADC; `ads1115`: a thermistor divider read by an ADS1115 with its
excitation measured; `max31865`: a Pt100/Pt1000 RTD) with the pins and parts of
hardware/wiring.md's tables unless the user gives others. `check_config` runs the firmware's own
validation (firmware/heatlog_fw/config.py, imported through heatlog.sim.firmware) and returns
every problem at once. Both are pure: no files, no printing.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from heatlog.errors import InputError

VARIANTS = ("divider", "ads1115", "max31865")
BOARDS = ("rp2040", "rp2350", "rp2350b", "esp32")

# The display models are only for the board's own °C readout (the log keeps raw counts): a
# generic 10 kΩ NTC (Steinhart–Hart coefficients of the firmware's example config) and the
# IEC 60751 Callendar–Van Dusen coefficients (docs/REFERENCES.md: IEC60751).
_NTC_MODEL = {"type": "steinhart_hart", "A": 1.129148e-3, "B": 2.34125e-4, "C": 8.76741e-8}
_RTD_A, _RTD_B, _RTD_C = 3.9083e-3, -5.775e-7, -4.183e-12

# Pins and parts of hardware/wiring.md (Pico column for rp2*, ESP32 column for esp32).
_DEFAULTS: dict[str, dict[str, dict[str, Any]]] = {
    "rp2": {
        "divider": {"pin": 26, "r_fixed_ohm": 10000},
        "ads1115": {"i2c": {"id": 0, "sda": 4, "scl": 5}, "address": 72, "r_fixed_ohm": 10000},
        "max31865": {
            "spi": {"id": 0, "sck": 18, "mosi": 19, "miso": 16},
            "cs": 17,
            "r_ref_ohm": 430,
            "wires": 3,
            "mains_hz": 50,
            "r0_ohm": 100,
        },
    },  # fmt: skip
    "esp32": {
        "divider": {"pin": 34, "excitation_pin": 35, "excitation_divider": 2, "r_fixed_ohm": 22000},
        "ads1115": {"i2c": {"id": 0, "sda": 21, "scl": 22}, "address": 73, "r_fixed_ohm": 10000},
        "max31865": {
            "spi": {"id": 2, "sck": 18, "mosi": 23, "miso": 19},
            "cs": 5,
            "r_ref_ohm": 4300,
            "wires": 4,
            "mains_hz": 50,
            "r0_ohm": 1000,
        },
    },  # fmt: skip
}


@dataclass(frozen=True)
class VariantOptions:
    """The user's pins and parts; None keeps the wiring guide's value."""

    pin: int | None = None
    excitation_pin: int | None = None
    r_fixed_ohm: int | None = None
    ntc_side: str | None = None
    i2c_id: int | None = None
    sda: int | None = None
    scl: int | None = None
    address: int | None = None
    spi_id: int | None = None
    sck: int | None = None
    mosi: int | None = None
    miso: int | None = None
    cs: int | None = None
    r_ref_ohm: float | None = None
    r0_ohm: float | None = None
    wires: int | None = None
    mains_hz: int | None = None


def _port(board: str) -> str:
    if board not in BOARDS:
        raise InputError(f"unknown board {board!r}; choose one of {', '.join(BOARDS)}")
    return "esp32" if board == "esp32" else "rp2"


def _channel(variant: str, board: str, o: VariantOptions, n: int) -> dict[str, Any]:
    d = _DEFAULTS[_port(board)][variant]

    def pick(value: Any, key: str) -> Any:
        return d[key] if value is None else value

    side = o.ntc_side or "low"
    if variant == "divider":
        ch: dict[str, Any] = {
            "kind": "adc_divider", "probe_id": f"NTC-{n}", "pin": pick(o.pin, "pin"),
            "r_fixed_ohm": pick(o.r_fixed_ohm, "r_fixed_ohm"), "ntc_side": side,
        }  # fmt: skip
        if _port(board) == "esp32":
            ch["excitation_pin"] = pick(o.excitation_pin, "excitation_pin")
            ch["excitation_divider"] = d["excitation_divider"]
        elif o.excitation_pin is not None:
            ch["excitation_pin"] = o.excitation_pin  # the check says why it does not belong
        ch["model"] = dict(_NTC_MODEL)
        return ch
    if variant == "ads1115":
        bus = dict(d["i2c"])
        for key, value in (("id", o.i2c_id), ("sda", o.sda), ("scl", o.scl)):
            if value is not None:
                bus[key] = value
        return {
            "kind": "ads1115", "probe_id": f"NTC-{n}", "i2c": bus,
            "address": pick(o.address, "address"), "signal": 4, "excitation": 7, "gain": 1,
            "rate": 4, "r_fixed_ohm": pick(o.r_fixed_ohm, "r_fixed_ohm"), "ntc_side": side,
            "model": dict(_NTC_MODEL),
        }  # fmt: skip
    bus = dict(d["spi"])
    for key, value in (("id", o.spi_id), ("sck", o.sck), ("mosi", o.mosi), ("miso", o.miso)):
        if value is not None:
            bus[key] = value
    r0 = pick(o.r0_ohm, "r0_ohm")
    return {
        "kind": "max31865", "probe_id": f"PT{int(r0)}-{n}", "spi": bus, "cs": pick(o.cs, "cs"),
        "r_ref_ohm": pick(o.r_ref_ohm, "r_ref_ohm"), "wires": pick(o.wires, "wires"),
        "mains_hz": pick(o.mains_hz, "mains_hz"),
        "model": {"type": "callendar_van_dusen", "R0": r0, "A": _RTD_A, "B": _RTD_B, "C": _RTD_C},
    }  # fmt: skip


def new_config(
    variants: list[str],
    board: str,
    board_id: str,
    options: VariantOptions | None = None,
    interval_ms: int = 1000,
    oversample: int = 16,
) -> dict[str, Any]:
    """A config dict for the variants in order (one channel each)."""
    if not variants:
        raise InputError(f"name at least one --variant ({', '.join(VARIANTS)})")
    for v in variants:
        if v not in VARIANTS:
            raise InputError(f"unknown variant {v!r}; choose from {', '.join(VARIANTS)}")
    if len(set(variants)) != len(variants):
        raise InputError("each variant once: a second channel of a kind needs its own pins; "
                         "edit the written file for that")  # fmt: skip
    o = options or VariantOptions()
    return {
        "board_id": board_id,
        "board": board,
        "interval_ms": interval_ms,
        "oversample": oversample,
        "flush_ms": 5000,
        "watchdog_ms": 8000,
        "led_pin": "LED" if _port(board) == "rp2" else None,
        "channels": [_channel(v, board, o, i + 1) for i, v in enumerate(variants)],
    }


def check_config(text: str, board: str) -> list[str]:
    """Every problem the firmware finds in config text for `board` (its pin tables too)."""
    from heatlog.device.install import firmware_config_module

    port = _port(board)
    cfg_mod = firmware_config_module()
    if len(text) > cfg_mod.MAX_CONFIG_BYTES:
        return [f"config longer than {cfg_mod.MAX_CONFIG_BYTES} bytes"]
    try:
        cfg = json.loads(text)
    except ValueError:
        return ["config is not valid JSON"]
    problems: list[str] = []
    if isinstance(cfg, dict):
        named = cfg.get("board")
        if named is None:
            default = "esp32" if port == "esp32" else "rp2040"
            if board != default:
                problems.append(
                    f"board is missing: on the board the firmware checks the pins as {default} "
                    f'(its port\'s default), not {board}; add "board": "{board}"'
                )
            cfg = dict(cfg, board=board)
        elif named != board:
            problems.append(f"board is {named!r} in the file but --board is {board}")
    return problems + list(cfg_mod.validate(cfg, port))


def to_text(cfg: dict[str, Any]) -> str:
    return json.dumps(cfg, indent=1) + "\n"
