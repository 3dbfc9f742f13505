"""The virtual board's current/voltage monitor: an INA226 register map over the heater.

The firmware's driver (firmware/heatlog_fw/ina2xx.py) writes the configuration register and
reads the shunt and bus registers; this model answers with the heater's current and voltage at
that moment, through an invented set of the device's errors (inside the datasheet's maximum
errors, docs/REFERENCES.md: INA226, from memory): gain, offset, one code of noise and the code
steps (2.5 µV shunt, 1.25 mV bus). The truth is what the thermal model's heater did.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

SHUNT_LSB_V = 2.5e-6
BUS_LSB_V = 1.25e-3
ADDRESS = 0x40


@dataclass
class SimIna226:
    """Register model; ``state()`` gives (heater volts, heater amps) now."""

    state: Callable[[], tuple[float, float]]
    shunt_ohm: float
    rng: np.random.Generator
    shunt_gain: float = 1.0006  # invented, inside the 0.1 % maximum
    bus_gain: float = 0.9996  # invented
    shunt_offset_V: float = 3e-6  # invented, inside ±10 µV
    bus_offset_V: float = 2e-3  # invented, inside ±7.5 mV
    config: int = 0x4127  # power-on default
    writes: list[tuple[int, int]] = field(default_factory=list)

    def write(self, reg: int, data: bytes) -> None:
        v = (data[0] << 8) | data[1]
        self.writes.append((reg, v))
        if reg == 0:
            self.config = v & 0x7FFF

    def read(self, reg: int, n: int) -> bytes:
        if reg == 0:
            v = self.config
        else:
            volts, amps = self.state()
            if reg == 1:
                x = amps * self.shunt_ohm * self.shunt_gain + self.shunt_offset_V
                code = round(x / SHUNT_LSB_V + self.rng.normal(0.0, 0.5))
                v = max(-32768, min(32767, code)) & 0xFFFF
            elif reg == 2:
                x = volts * self.bus_gain + self.bus_offset_V
                v = max(0, min(0x7FFF, round(x / BUS_LSB_V + self.rng.normal(0.0, 0.5))))
            else:
                v = 0
        return bytes([(v >> 8) & 0xFF, v & 0xFF][:n])
