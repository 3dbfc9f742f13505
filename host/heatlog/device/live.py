"""Live readings: decode the board's streamed records and calibrate them with probe files.

The channel table comes from the board's config (``get config``): kind, fixed or reference
resistor, side, probe id; raw values are converted exactly as for pulled runs
(:func:`heatlog.device.export.chain_for`).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from heatlog.device.commands import BadReply
from heatlog.device.export import chain_for, load_probes
from heatlog.errors import HeatlogError
from heatlog.logformat import (
    KIND_NAMES,
    MODE_NTC_HIGH,
    MODE_UV_RATIO,
    POWER_KIND_CODES,
    Channel,
    decode_record,
)
from heatlog.monitorlog import BUS_LSB_V, SHUNT_LSB_V

_KIND_CODES = {v: k for k, v in KIND_NAMES.items()}


def channels_from_config(cfg: dict[str, Any]) -> tuple[list[Channel], int]:
    chans = cfg.get("channels")
    if not isinstance(chans, list) or not 1 <= len(chans) <= 8:
        raise BadReply("get config: no channel list")
    out = []
    for ch in chans:
        if not isinstance(ch, dict) or ch.get("kind") not in _KIND_CODES:
            raise BadReply("get config: unknown channel kind")
        code = _KIND_CODES[ch["kind"]]
        if code in POWER_KIND_CODES:  # a heater monitor logs two channels: bus, then shunt
            shunt = ch.get("shunt_ohm")
            if isinstance(shunt, bool) or not isinstance(shunt, int | float) or not shunt > 0:
                raise BadReply("get config: power monitor without a positive shunt_ohm")
            pid = str(ch.get("probe_id", ""))[:16]
            out += [Channel(ch["kind"], code, m, 0, 0, float(shunt), pid) for m in (0, 1)]
            continue
        ref = ch.get("r_ref_ohm" if code == 3 else "r_fixed_ohm")
        if isinstance(ref, bool) or not isinstance(ref, int | float) or not ref > 0:
            raise BadReply("get config: channel without a positive resistor value")
        if code == 3:
            mode = int(ch.get("wires", 4))
        else:  # the same mode bits the board writes into a run header (LOGFORMAT.md)
            mode = MODE_NTC_HIGH if ch.get("ntc_side") == "high" else 0
            if code == 1 and ch.get("excitation_pin") is not None:
                mode |= MODE_UV_RATIO  # ESP32: Q15 ratio against the measured excitation
        out.append(
            Channel(ch["kind"], code, mode, 0, 0, float(ref), str(ch.get("probe_id", ""))[:16])
        )
    n = cfg.get("oversample", 16)
    if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= 256:
        raise BadReply("get config: oversample out of range")
    return out, n


class LiveDecoder:
    def __init__(self, cfg: dict[str, Any], record_size: int, probe_dir: Path | None):
        self.channels, self.oversample = channels_from_config(cfg)
        if record_size != 14 + 4 * len(self.channels):
            raise BadReply("stream: record size does not match the config's channels")
        self.probes = load_probes(probe_dir, [c.probe_id for c in self.channels])

    def channels_meta(self) -> list[dict[str, Any]]:
        return [
            {
                "probe_id": c.probe_id,
                "kind": c.kind,
                "calibrated": c.probe_id in self.probes,
                "power_monitor": c.is_power,  # volts and amps, not a probe: no probe file
            }
            for c in self.channels
        ]

    def decode(self, payload: bytes) -> dict[str, Any]:
        seq, offset, flags, faults, raw = decode_record(payload, len(self.channels))
        temps: list[float | None] = []
        for c, v in zip(self.channels, raw, strict=True):
            probe = None if c.is_power else self.probes.get(c.probe_id)
            t = None
            if probe is not None:
                chain, _ = chain_for(c, self.oversample)
                try:
                    t = float(
                        probe.model.resistance_to_temperature(np.asarray(chain.to_resistance(v)))
                    )
                except HeatlogError:
                    t = None
            temps.append(t)
        return {
            "seq": seq,
            "offset_s": offset / 1000.0,
            "flags": flags,
            "faults": faults,
            "raw": list(raw),
            "temp_C": temps,
        }

    def line(self, r: dict[str, Any]) -> str:
        parts = []
        for c, v, t in zip(self.channels, r["raw"], r["temp_C"], strict=True):
            if c.is_power:
                if c.mode == 0:
                    parts.append(f"{c.probe_id}: {v * BUS_LSB_V[c.kind_code]:.3f} V")
                else:
                    amps = v * SHUNT_LSB_V[c.kind_code] / c.ref_ohm
                    parts.append(f"{c.probe_id}: {amps:.4f} A")
                continue
            parts.append(f"{c.probe_id}: {v}" + ("" if t is None else f" = {t:.3f} °C"))
        return f"{r['offset_s']:10.1f} s  " + "  ".join(parts)
