"""What each target chip's GPIOs can do, for config validation (one table per board).

The port is `sys.platform` ("rp2" or "esp32"); a config may name its board ("rp2040", "rp2350",
"rp2350b", "esp32"); otherwise the port's default table is used. Off a board (CPython, the
Unix or WebAssembly port) pin capabilities are only checked when the config names its board.

Chip facts, from memory (not re-read in the datasheets during this work; check before relying on
them elsewhere):
- RP2040 datasheet, GPIO function table: GPIO 0-29; GPIO n is I2C((n >> 1) & 1) SDA for even n,
  SCL for odd n; SPI((n >> 3) & 1) RX/CSn/SCK/TX for n % 4 = 0/1/2/3; ADC inputs on GPIO 26-29.
- RP2350 datasheet: RP2350A (QFN-60, e.g. Pico 2) as the RP2040 (GPIO 0-29, ADC 26-29);
  RP2350B (QFN-80) has GPIO 0-47 with the ADC on GPIO 40-47, and the I2C/SPI pattern continues.
- ESP32 datasheet and MicroPython's esp32 quick reference: GPIO 0-19, 21-23, 25-27, 32-39;
  GPIO 6-11 drive the module's flash; GPIO 34-39 are inputs only; ADC1 on GPIO 32-39 (ADC2
  stops working while WiFi runs); any pin can carry I2C/SPI via the GPIO matrix; hardware SPI
  ids 1 and 2, I2C ids 0 and 1.
"""

import sys

BOARDS = {"rp2040": "rp2", "rp2350": "rp2", "rp2350b": "rp2", "esp32": "esp32"}
DEFAULT_BOARD = {"rp2": "rp2040", "esp32": "esp32"}
ADC_TEXT = {
    "rp2040": "GPIO 26-29",
    "rp2350": "GPIO 26-29",
    "rp2350b": "GPIO 40-47",
    "esp32": "ADC1, GPIO 32-39",
}
# Longest watchdog timeout, ms. RP2040 8388 (MicroPython machine.WDT docs); RP2350 16777
# (project firmware notes, checked there against MicroPython's rp2 source). ESP32: the ESP-IDF
# task watchdog has no small hardware cap (MicroPython ports/esp32/machine_wdt.c); older ports
# round the timeout down to whole seconds. 60 s is our own ceiling (common practice, no
# source). Off a board, with no board named, the smallest (RP2040) applies.
WATCHDOG_MAX_MS = {"rp2040": 8388, "rp2350": 16777, "rp2350b": 16777, "esp32": 60000}
_SPI_SLOT = {"miso": 0, "cs": 1, "sck": 2, "mosi": 3}  # rp2: n % 4
_ESP32_GPIOS = tuple(range(0, 20)) + (21, 22, 23, 25, 26, 27) + tuple(range(32, 40))


def port():
    """The MicroPython port this runs on ("rp2", "esp32"), or None off a board."""
    p = sys.platform
    return p if p in DEFAULT_BOARD else None


def board_for(cfg_board, this_port):
    """(board table name or None, problem or None) for a config's `board` key on this port."""
    if cfg_board is None:
        return DEFAULT_BOARD.get(this_port), None
    if not isinstance(cfg_board, str) or cfg_board not in BOARDS:
        return None, "board must be one of " + ", ".join(BOARDS)
    if this_port is not None and BOARDS[cfg_board] != this_port:
        return None, "board " + cfg_board + " does not match this " + this_port + " firmware"
    return cfg_board, None


def watchdog_max_ms(board):
    return WATCHDOG_MAX_MS.get(board, 8388)


def gpio_ok(board, pin):
    """A GPIO the board exposes and leaves free (ESP32: not the flash pins 6-11)."""
    if board == "esp32":
        return pin in _ESP32_GPIOS and not 6 <= pin <= 11
    return 0 <= pin <= (47 if board == "rp2350b" else 29)


def output_ok(board, pin):
    return gpio_ok(board, pin) and not (board == "esp32" and 34 <= pin <= 39)


def adc_ok(board, pin):
    if board == "esp32":
        return 32 <= pin <= 39
    if board == "rp2350b":
        return 40 <= pin <= 47
    return 26 <= pin <= 29


def bus_ids(board, bus):
    if board == "esp32" and bus == "spi":
        return (1, 2)
    return (0, 1)


def bus_pin_problem(board, bus, bus_id, field, pin):
    """Why `pin` cannot be `field` (sda, scl, sck, mosi, miso) of bus `bus` `bus_id`, or None."""
    if not gpio_ok(board, pin):
        return "GPIO " + str(pin) + " is not a free GPIO on " + board
    if field != "miso" and not output_ok(board, pin):
        return "GPIO " + str(pin) + " is input-only on " + board
    if board == "esp32":
        return None  # GPIO matrix: any free pin
    if bus == "i2c":
        ok = (pin >> 1) & 1 == bus_id and pin & 1 == (0 if field == "sda" else 1)
    else:
        ok = (pin >> 3) & 1 == bus_id and pin % 4 == _SPI_SLOT[field]
    if ok:
        return None
    return "GPIO " + str(pin) + " is not " + bus.upper() + str(bus_id) + " " + field.upper()
