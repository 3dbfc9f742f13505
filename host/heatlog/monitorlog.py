"""A heater's current/voltage monitor in a run log: its two logged channels as volts.

A config channel of kind ``ina226`` or ``ina219`` is logged as two channels with the same
probe id (firmware/LOGFORMAT.md): mode 0 the bus-voltage code, mode 1 the signed shunt-voltage
code; the entry's reference field holds the shunt in micro-ohms. Code steps: INA226 1.25 mV
and 2.5 µV, INA219 4 mV and 10 µV (docs/REFERENCES.md: INA226, INA219; from memory).
Pure: works on a decoded :class:`~heatlog.logformat.RunLog`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from heatlog.errors import InputError
from heatlog.logformat import LogHeader, RunLog

BUS_LSB_V = {4: 1.25e-3, 5: 4e-3}
SHUNT_LSB_V = {4: 2.5e-6, 5: 10e-6}
MONITOR_NAMES = {4: "ina226", 5: "ina219"}


@dataclass(frozen=True)
class PowerChannels:
    """The bus and shunt channels of one monitor."""

    probe_id: str
    monitor: str
    shunt_ohm: float
    bus_index: int
    shunt_index: int
    kind_code: int

    def volts(self, raw: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(bus V, shunt V) from a records × channels array of raw values."""
        bus = raw[:, self.bus_index].astype(np.float64) * BUS_LSB_V[self.kind_code]
        shunt = raw[:, self.shunt_index].astype(np.float64) * SHUNT_LSB_V[self.kind_code]
        return bus, shunt

    def to_dict(self) -> dict[str, object]:
        return {
            "probe_id": self.probe_id,
            "monitor": self.monitor,
            "shunt_ohm": self.shunt_ohm,
            "bus_channel": self.bus_index,
            "shunt_channel": self.shunt_index,
        }


def power_channels(header: LogHeader) -> list[PowerChannels]:
    """Every monitor in the log's channel table (bus and shunt entries paired in order)."""
    out = []
    chans = header.channels
    i = 0
    while i < len(chans):
        c = chans[i]
        if not c.is_power:
            i += 1
            continue
        nxt = chans[i + 1] if i + 1 < len(chans) else None
        if c.mode != 0 or nxt is None or nxt.kind_code != c.kind_code or nxt.mode != 1:
            raise InputError(
                f"channel {i} ({c.probe_id!r}) is a monitor's bus channel without its shunt "
                "channel beside it; the log's channel table is damaged"
            )
        if not c.ref_ohm > 0:
            raise InputError(f"channel {i} ({c.probe_id!r}): the monitor's shunt is 0 ohm")
        out.append(
            PowerChannels(c.probe_id, MONITOR_NAMES[c.kind_code], c.ref_ohm, i, i + 1, c.kind_code)
        )
        i += 2
    return out


def monitor_volts(log: RunLog, keep: np.ndarray | None = None) -> dict[str, tuple[np.ndarray, ...]]:
    """probe id → (bus V, shunt V) for each monitor, over the records in ``keep``."""
    raw = log.raw if keep is None else log.raw[keep]
    return {p.probe_id: p.volts(raw) for p in power_channels(log.header)}
