"""The wiring tables in hardware/*.md agree with the firmware's example configs.

A pin table is a Markdown table right after a marker line

    <!-- pin-table: config=firmware/config.example.json board=rp2040 -->

with the columns `config key | value | board pin | connects to`. A row whose config key is a path
into the JSON file (`channels[1].i2c.sda`) must hold that file's value; every wiring-relevant key of
the file needs a row; the board pin must name the same GPIO (and, on a Pico, the right header pin);
and the config's pins must be able to do their job on that chip. Rows keyed `—` are wiring the
config does not name (power, ground); a GPIO they name must not be one the config uses.

Chip facts used (from memory, not read in the text during this work — check before relying on them
elsewhere):
- RP2040 datasheet, GPIO function table: GPIO n is I2C(n//2 % 2) SDA for even n, SCL for odd n;
  SPI((n//8) % 2) RX/CSn/SCK/TX for n % 4 = 0/1/2/3; ADC inputs on GPIO 26–29.
- Raspberry Pi Pico datasheet: the 40-pin header layout below (same on Pico W and Pico 2).
- ESP32 datasheet and the MicroPython esp32 quick reference: ADC1 on GPIO 32–39; GPIO 34–39 are
  inputs only; GPIO 6–11 belong to the flash; hardware SPI ids 1 and 2, I2C ids 0 and 1.
"""

from __future__ import annotations

import json
import re
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

REPO = Path(__file__).resolve().parents[1]
HARDWARE = REPO / "hardware"
FIRMWARE = REPO / "firmware"
CONFIGS = ("firmware/config.example.json", "firmware/config.esp32.example.json")

if str(FIRMWARE) not in sys.path:
    sys.path.insert(0, str(FIRMWARE))

from heatlog_fw import channels as fw_channels  # noqa: E402
from heatlog_fw import config as fw_config  # noqa: E402
from heatlog_fw.ads1115 import FSR_MV  # noqa: E402

MARKER = re.compile(r"<!--\s*pin-table:\s*config=(\S+)\s+board=(\S+)\s*-->")
HEADER = ["config key", "value", "board pin", "connects to"]
NONE = ("—", "-", "")
EXCITATION_MV = 3300  # every divider in hardware/wiring.md is fed from the 3.3 V rail

# Wiring-relevant keys of each channel kind (the rest — models, rates, filters — is not wiring).
WIRING_KEYS = {
    "adc_divider": ("pin", "excitation_pin", "excitation_divider", "r_fixed_ohm", "ntc_side"),
    "ads1115": (
        "i2c.id",
        "i2c.sda",
        "i2c.scl",
        "address",
        "signal",
        "excitation",
        "gain",
        "r_fixed_ohm",
        "ntc_side",
    ),
    "max31865": ("spi.id", "spi.sck", "spi.mosi", "spi.miso", "cs", "r_ref_ohm", "wires"),
}
GPIO_FIELDS = ("pin", "excitation_pin", "sda", "scl", "sck", "mosi", "miso", "cs")
ADS1115_ADDR = {0x48: "GND", 0x49: "VDD", 0x4A: "SDA", 0x4B: "SCL"}  # ADS1115 datasheet

# Raspberry Pi Pico header, physical pin -> name (Pico datasheet pinout, from memory).
PICO_HEADER = {
    1: "GP0", 2: "GP1", 3: "GND", 4: "GP2", 5: "GP3", 6: "GP4", 7: "GP5", 8: "GND", 9: "GP6",
    10: "GP7", 11: "GP8", 12: "GP9", 13: "GND", 14: "GP10", 15: "GP11", 16: "GP12", 17: "GP13",
    18: "GND", 19: "GP14", 20: "GP15", 21: "GP16", 22: "GP17", 23: "GND", 24: "GP18", 25: "GP19",
    26: "GP20", 27: "GP21", 28: "GND", 29: "GP22", 30: "RUN", 31: "GP26", 32: "GP27", 33: "AGND",
    34: "GP28", 35: "ADC_VREF", 36: "3V3(OUT)", 37: "3V3_EN", 38: "GND", 39: "VSYS", 40: "VBUS",
}  # fmt: skip
ESP32_GPIOS = set(range(0, 20)) | {21, 22, 23, 25, 26, 27} | set(range(32, 40))


@dataclass(frozen=True)
class PinRow:
    config: str
    board: str
    key: str  # "" for a row the config does not name
    value: str
    board_pin: str
    connects_to: str
    where: str


def parse_pin_tables(text: str, source: str) -> tuple[list[PinRow], list[str]]:
    """Rows of every marked pin table in a Markdown text, and problems with the tables' form."""
    rows: list[PinRow] = []
    problems: list[str] = []
    lines = text.splitlines()
    for i, line in enumerate(lines):
        m = MARKER.search(line)
        if not m:
            continue
        j = i + 1
        while j < len(lines) and not lines[j].strip():
            j += 1
        table = []
        while j < len(lines) and lines[j].lstrip().startswith("|"):
            table.append((j + 1, lines[j]))
            j += 1
        if len(table) < 3:
            problems.append(f"{source}:{i + 1}: pin-table marker without a table below it")
            continue
        header = _cells(table[0][1])
        if header != HEADER:
            problems.append(f"{source}:{table[0][0]}: pin table columns must be {HEADER}")
            continue
        for lineno, row in table[2:]:
            cells = _cells(row)
            if len(cells) != len(HEADER):
                problems.append(f"{source}:{lineno}: row has {len(cells)} cells, want 4")
                continue
            key, value, board_pin, connects = cells
            rows.append(
                PinRow(
                    m.group(1),
                    m.group(2),
                    "" if key in NONE else key,
                    "" if value in NONE else value,
                    board_pin,
                    connects,
                    f"{source}:{lineno}",
                )
            )
    return rows, problems


def _cells(line: str) -> list[str]:
    return [c.strip().strip("`").strip() for c in line.strip().strip("|").split("|")]


def lookup(cfg: Any, key: str) -> Any:
    """Value at a path such as ``channels[1].i2c.sda``; KeyError if there is none."""
    node = cfg
    for part in key.split("."):
        m = re.fullmatch(r"(\w+)((?:\[\d+\])*)", part)
        if not m:
            raise KeyError(key)
        try:
            node = node[m.group(1)]
            for idx in re.findall(r"\[(\d+)\]", m.group(2)):
                node = node[int(idx)]
        except (KeyError, IndexError, TypeError):
            raise KeyError(key) from None
    return node


def wiring_keys(cfg: dict) -> list[str]:
    return [
        f"channels[{i}].{field}"
        for i, ch in enumerate(cfg["channels"])
        for field in WIRING_KEYS[ch["kind"]]
        if field in ch or field.split(".")[0] in ch
    ]


def gpio_roles(cfg: dict) -> dict[int, set[tuple]]:
    """GPIO -> what uses it; a shared bus pin has one role (bus, id, signal)."""
    roles: dict[int, set[tuple]] = {}
    for i, ch in enumerate(cfg["channels"]):
        for bus in ("i2c", "spi"):
            if bus in ch:
                for field, pin in ch[bus].items():
                    if field != "id":
                        roles.setdefault(pin, set()).add((bus, ch[bus]["id"], field))
        for field in ("pin", "excitation_pin", "cs"):
            if field in ch:
                roles.setdefault(ch[field], set()).add((f"channels[{i}]", field))
    return roles


def board_problems(cfg: dict, board: str, name: str) -> list[str]:
    """Pins of cfg that cannot do their job on the chip (see the module docstring for the facts)."""
    out = []
    for pin, roles in gpio_roles(cfg).items():
        if len(roles) > 1:
            out.append(f"{name}: GPIO {pin} has more than one use: {sorted(map(str, roles))}")
    for i, ch in enumerate(cfg["channels"]):
        where = f"{name}: channels[{i}]"
        if board == "rp2040":
            out += _rp2040(ch, where)
        elif board == "esp32":
            out += _esp32(ch, where)
        else:
            out.append(f"{where}: unknown board {board!r}")
        if ch["kind"] == "ads1115" and FSR_MV[ch["gain"]] < EXCITATION_MV:
            out.append(
                f"{where}.gain {ch['gain']}: full scale ±{FSR_MV[ch['gain']]} mV cannot hold the "
                f"{EXCITATION_MV} mV excitation"
            )
    return out


def _rp2040(ch: dict, where: str) -> list[str]:
    out = []
    header = {int(n[2:]) for n in PICO_HEADER.values() if n.startswith("GP")}
    for pin in _gpios(ch):
        if pin not in header:
            out.append(f"{where}: GP{pin} is not on the Pico header")
    if ch["kind"] == "adc_divider" and ch["pin"] not in (26, 27, 28, 29):
        out.append(f"{where}.pin {ch['pin']}: RP2040 ADC inputs are GPIO 26-29")
    if "i2c" in ch:
        b = ch["i2c"]
        for field, parity in (("sda", 0), ("scl", 1)):
            p = b[field]
            if p % 2 != parity or (p // 2) % 2 != b["id"]:
                out.append(f"{where}.i2c.{field}: GP{p} is not I2C{b['id']} {field.upper()}")
    if "spi" in ch:
        b = ch["spi"]
        for field, rem in (("miso", 0), ("sck", 2), ("mosi", 3)):
            p = b[field]
            if p % 4 != rem or (p // 8) % 2 != b["id"]:
                out.append(f"{where}.spi.{field}: GP{p} is not SPI{b['id']} {field.upper()}")
    return out


def _esp32(ch: dict, where: str) -> list[str]:
    out = []
    for pin in _gpios(ch):
        if pin not in ESP32_GPIOS or 6 <= pin <= 11:
            out.append(f"{where}: GPIO{pin} is not a free ESP32 GPIO (6-11 belong to the flash)")
    for field in ("pin", "excitation_pin"):
        if ch["kind"] == "adc_divider" and not 32 <= ch.get(field, 32) <= 39:
            out.append(
                f"{where}.{field} {ch[field]}: use an ADC1 pin (GPIO 32-39); ADC2 fails with WiFi"
            )
    if ch["kind"] == "adc_divider" and "excitation_pin" not in ch:
        out.append(f"{where}: an ESP32 divider needs excitation_pin (its ADC is not ratiometric)")
    outputs = [("i2c.sda", ch.get("i2c", {}).get("sda")), ("i2c.scl", ch.get("i2c", {}).get("scl"))]
    outputs += [
        ("spi.sck", ch.get("spi", {}).get("sck")),
        ("spi.mosi", ch.get("spi", {}).get("mosi")),
    ]
    outputs += [("cs", ch.get("cs"))]
    for field, pin in outputs:
        if pin is not None and 34 <= pin <= 39:
            out.append(f"{where}.{field}: GPIO{pin} is input-only")
    if "spi" in ch and ch["spi"]["id"] not in (1, 2):
        out.append(f"{where}.spi.id {ch['spi']['id']}: ESP32 hardware SPI ids are 1 and 2")
    if "i2c" in ch and ch["i2c"]["id"] not in (0, 1):
        out.append(f"{where}.i2c.id {ch['i2c']['id']}: ESP32 I2C ids are 0 and 1")
    return out


def _gpios(ch: dict) -> list[int]:
    pins = [ch[f] for f in ("pin", "excitation_pin", "cs") if f in ch]
    for bus in ("i2c", "spi"):
        pins += [v for k, v in ch.get(bus, {}).items() if k != "id"]
    return pins


def _row_pin_problems(row: PinRow, value: Any) -> list[str]:
    """The board-pin cell of a keyed row names what the value says."""
    field = row.key.rsplit(".", 1)[-1]
    text = row.board_pin
    where = f"{row.where}: {row.key}"
    if field in GPIO_FIELDS:
        named = [int(n) for n in re.findall(r"\bGP(?:IO)?(\d+)\b", text)]
        if named != [value]:
            return [f"{where}: board pin {text!r} does not name GPIO {value}"]
        return _header_problems(row)
    if field in ("signal", "excitation"):
        want = f"AIN{value - 4}" if isinstance(value, int) and 4 <= value <= 7 else None
        if want is None or not re.search(rf"\b{want}\b", text):
            return [f"{where}: board pin {text!r} should be {want or 'a single-ended AINx'}"]
    if field == "address":
        tie = ADS1115_ADDR.get(value)
        if tie is None or not re.search(rf"ADDR\s*(→|->|to)\s*{tie}\b", text):
            return [f"{where}: address {value} needs 'ADDR → {tie}' in the board pin cell"]
    return []


def _header_problems(row: PinRow) -> list[str]:
    """On a Pico, 'NAME (pin N)' must match the header layout."""
    if row.board != "rp2040":
        return []
    out = []
    for name, num in re.findall(r"([\w()]+?)\s*\(pin (\d+)\)", row.board_pin):
        if PICO_HEADER.get(int(num)) != name:
            out.append(
                f"{row.where}: Pico header pin {num} is {PICO_HEADER.get(int(num))}, not {name}"
            )
    return out


def check_pin_tables(rows: list[PinRow], configs: dict[str, dict]) -> list[str]:
    """Every disagreement between pin-table rows and the configs they name."""
    out: list[str] = []
    seen: dict[str, set[str]] = {}
    boards: dict[str, str] = {}
    for row in rows:
        cfg = configs.get(row.config)
        if cfg is None:
            out.append(f"{row.where}: table names {row.config}, which is not a known config")
            continue
        if boards.setdefault(row.config, row.board) != row.board:
            out.append(f"{row.where}: {row.config} is wired for two boards")
        if not row.key:
            out += _header_problems(row)
            for n in re.findall(r"\bGP(?:IO)?(\d+)\b", row.board_pin):
                if int(n) in gpio_roles(cfg):
                    out.append(
                        f"{row.where}: GPIO {n} is listed as extra wiring but the config uses it"
                    )
            continue
        seen.setdefault(row.config, set()).add(row.key)
        try:
            value = lookup(cfg, row.key)
        except KeyError:
            out.append(f"{row.where}: {row.key} is not in {row.config}")
            continue
        try:
            stated = json.loads(row.value)
        except ValueError:
            out.append(f"{row.where}: value {row.value!r} of {row.key} is not JSON")
            continue
        if stated != value or type(stated) is not type(value):
            out.append(
                f"{row.where}: {row.key} is {value!r} in {row.config}, table says {stated!r}"
            )
            continue
        out += _row_pin_problems(row, value)
    for name, board in boards.items():
        cfg = configs[name]
        missing = [k for k in wiring_keys(cfg) if k not in seen.get(name, set())]
        if missing:
            out.append(f"{name}: no pin-table row for {', '.join(missing)}")
        out += board_problems(cfg, board, name)
    return out


def load_configs() -> dict[str, dict]:
    return {name: json.loads((REPO / name).read_text(encoding="utf-8")) for name in CONFIGS}


def hardware_rows() -> tuple[list[PinRow], list[str]]:
    rows: list[PinRow] = []
    problems: list[str] = []
    for md in sorted(HARDWARE.glob("*.md")):
        r, p = parse_pin_tables(md.read_text(encoding="utf-8"), md.relative_to(REPO).as_posix())
        rows += r
        problems += p
    return rows, problems


# --- the real documents -------------------------------------------------------------------------


def test_hardware_pin_tables_agree_with_both_configs():
    rows, problems = hardware_rows()
    assert problems == []
    assert {r.config for r in rows} == set(CONFIGS), "each example config needs a wiring table"
    assert check_pin_tables(rows, load_configs()) == []


@pytest.mark.parametrize("name", CONFIGS)
def test_example_config_passes_firmware_validation(name):
    """The firmware's own checks: config.parse at boot (pins on the config's board and the
    conversion-time limit included)."""
    cfg, errs = fw_config.parse((REPO / name).read_text(encoding="utf-8"))
    assert errs == []
    # config.validate refuses a config whose conversions outlast min(interval, 4 s)
    assert fw_channels.sample_time_ms(cfg) <= min(cfg["interval_ms"], 4000)


# --- the checker can fail -----------------------------------------------------------------------

GOOD = """
<!-- pin-table: config=c.json board=rp2040 -->
| config key | value | board pin | connects to |
|---|---|---|---|
| `channels[0].pin` | `26` | GP26 (pin 31) | midpoint |
| `channels[0].r_fixed_ohm` | `10000` | — | R_fixed |
| `channels[0].ntc_side` | `"low"` | — | NTC to AGND |
| `channels[1].i2c.id` | `0` | — | I2C0 |
| `channels[1].i2c.sda` | `4` | GP4 (pin 6) | SDA |
| `channels[1].i2c.scl` | `5` | GP5 (pin 7) | SCL |
| `channels[1].address` | `72` | ADDR → GND | 0x48 |
| `channels[1].signal` | `4` | AIN0 | midpoint |
| `channels[1].excitation` | `7` | AIN3 | excitation |
| `channels[1].gain` | `1` | — | ±4.096 V |
| `channels[1].r_fixed_ohm` | `10000` | — | R_fixed |
| `channels[1].ntc_side` | `"low"` | — | NTC |
| — | — | ADC_VREF (pin 35) | top of R_fixed |
"""


def _cfg() -> dict:
    base = load_configs()["firmware/config.example.json"]
    return {"channels": [dict(base["channels"][0]), json.loads(json.dumps(base["channels"][1]))]}


def _check(text: str, cfg: dict | None = None) -> list[str]:
    rows, problems = parse_pin_tables(text, "t.md")
    assert problems == []
    return check_pin_tables(rows, {"c.json": cfg or _cfg()})


def test_checker_accepts_a_consistent_table():
    assert _check(GOOD) == []


@pytest.mark.parametrize(
    ("old", "new", "expect"),
    [
        ("| `26` | GP26 (pin 31)", "| `27` | GP27 (pin 32)", "channels[0].pin is 26"),
        ("| `26` | GP26 (pin 31)", "| `26` | GP27 (pin 32)", "does not name GPIO 26"),
        ("GP26 (pin 31)", "GP26 (pin 32)", "header pin 32 is GP27"),
        ("ADC_VREF (pin 35)", "ADC_VREF (pin 36)", "header pin 36 is 3V3(OUT)"),
        ("| `72` | ADDR → GND", "| `72` | ADDR → VDD", "needs 'ADDR → GND'"),
        ("| `7` | AIN3", "| `7` | AIN2", "should be AIN3"),
        ('| `"low"` | — | NTC to AGND', '| `"high"` | — | NTC to AGND', "ntc_side is 'low'"),
        ("| `10000` | — | R_fixed |", "| `1000` | — | R_fixed |", "r_fixed_ohm is 10000"),
        ("| `channels[1].gain` | `1` | — | ±4.096 V |\n", "", "no pin-table row for channels[1].gain"),
        ("`channels[1].i2c.id`", "`channels[1].i2c.bus`", "channels[1].i2c.bus is not in"),
        ("| — | — | ADC_VREF (pin 35)", "| — | — | GP4 (pin 6)", "GPIO 4 is listed as extra wiring"),
    ],
)  # fmt: skip
def test_checker_reports_a_mismatched_table(old, new, expect):
    assert old in GOOD
    problems = _check(GOOD.replace(old, new, 1))
    assert any(expect in p for p in problems), problems


@pytest.mark.parametrize(
    ("path", "value", "expect"),
    [
        (("channels", 0, "pin"), 22, "RP2040 ADC inputs are GPIO 26-29"),
        (("channels", 1, "i2c", "sda"), 6, "is not I2C0 SDA"),
        (("channels", 1, "i2c", "scl"), 4, "is not I2C0 SCL"),
        (("channels", 1, "gain"), 2, "cannot hold the 3300 mV excitation"),
        (("channels", 1, "i2c", "sda"), 26, "GPIO 26 has more than one use"),
    ],
)
def test_checker_reports_pins_the_chip_cannot_use(path, value, expect):
    cfg = _cfg()
    node: Any = cfg
    for p in path[:-1]:
        node = node[p]
    node[path[-1]] = value
    text = GOOD
    for key in ("sda", "scl"):
        old = lookup(_cfg(), f"channels[1].i2c.{key}")
        new = lookup(cfg, f"channels[1].i2c.{key}")
        text = text.replace(f"| `{old}` | GP{old} (pin", f"| `{new}` | GP{new} (pin")
    problems = check_pin_tables(parse_pin_tables(text, "t.md")[0], {"c.json": cfg})
    assert any(expect in p for p in problems), problems


def test_esp32_rules_reject_adc2_and_input_only_outputs():
    cfg = load_configs()["firmware/config.esp32.example.json"]
    assert board_problems(cfg, "esp32", "e") == []
    bad = json.loads(json.dumps(cfg))
    bad["channels"][0]["pin"] = 25  # an ADC2 pin
    bad["channels"][2]["cs"] = 36  # input only
    bad["channels"][2]["spi"]["id"] = 0
    bad["channels"][0]["excitation_pin"] = 26  # an ADC2 pin
    problems = board_problems(bad, "esp32", "e")
    assert any("pin 25: use an ADC1 pin" in p for p in problems), problems
    assert any("excitation_pin 26: use an ADC1 pin" in p for p in problems), problems
    del bad["channels"][0]["excitation_pin"]
    assert any("needs excitation_pin" in p for p in board_problems(bad, "esp32", "e"))
    assert any("cs: GPIO36 is input-only" in p for p in problems), problems
    assert any("hardware SPI ids are 1 and 2" in p for p in problems), problems


def test_malformed_tables_are_reported():
    no_table = "<!-- pin-table: config=c.json board=rp2040 -->\n\ntext\n"
    assert "without a table" in parse_pin_tables(no_table, "t.md")[1][0]
    wrong_cols = GOOD.replace("| config key | value |", "| key | value |")
    assert "columns must be" in parse_pin_tables(wrong_cols, "t.md")[1][0]


def test_esp32_divider_midpoint_stays_in_the_adc_linear_range():
    """wiring.md: with 22 kΩ over the example NTC the ESP32 midpoint stays inside the 11 dB linear
    range (about 150–2450 mV, ESP-IDF ADC documentation as summarised in the firmware notes,
    approximate) from 0 to 80 °C, and the voltages the page quotes follow from the config."""
    from heatlog_fw.conversions import steinhart_hart_c

    ch = load_configs()["firmware/config.esp32.example.json"]["channels"][0]
    m = ch["model"]

    def ohms(t_c: float) -> float:  # invert the config's Steinhart–Hart curve by bisection in ln R
        lo, hi = 10.0, 1e7
        for _ in range(200):
            mid = (lo * hi) ** 0.5
            lo, hi = (mid, hi) if steinhart_hart_c(mid, m["A"], m["B"], m["C"]) > t_c else (lo, mid)
        return (lo * hi) ** 0.5

    def midpoint_v(t_c: float) -> float:
        r = ohms(t_c)
        return EXCITATION_MV / 1000 * r / (r + ch["r_fixed_ohm"])

    assert ch["ntc_side"] == "low"
    assert all(0.150 <= midpoint_v(t) <= 2.450 for t in range(0, 81))
    text = " ".join((HARDWARE / "wiring.md").read_text(encoding="utf-8").split())
    for t_c, quoted in ((0, 1.97), (60, 0.34), (80, 0.18)):
        assert f"{quoted:.2f} V at {t_c} °C" in text
        assert abs(midpoint_v(t_c) - quoted) <= 0.005, (t_c, midpoint_v(t_c))


def test_esp32_table_names_the_excitation_tap_and_it_sits_in_the_linear_range():
    """The ESP32 divider reads its excitation on a second ADC1 pin through a 1:k tap; the table must
    carry both keys, and 3.3 V / k must lie in the 11 dB linear range (about 150–2450 mV, ESP-IDF
    ADC documentation as summarised in the firmware notes, approximate)."""
    cfg = load_configs()["firmware/config.esp32.example.json"]
    ch = cfg["channels"][0]
    assert 0.150 <= EXCITATION_MV / 1000 / ch["excitation_divider"] <= 2.450
    text = (HARDWARE / "wiring.md").read_text(encoding="utf-8")
    row = next(ln for ln in text.splitlines() if ln.startswith("| `channels[0].excitation_pin`"))
    rows, _ = parse_pin_tables(text.replace(row + "\n", ""), "wiring.md")
    problems = check_pin_tables(rows, load_configs())
    assert any("no pin-table row for channels[0].excitation_pin" in p for p in problems), problems
