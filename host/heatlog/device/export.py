"""Turn a pulled run file into a CSV (time_s, raw and calibrated columns per channel) and a JSON
metadata file, applying probe files found by the probe ids in the log's channel table.

Raw values (firmware/LOGFORMAT.md) → resistance through the reading chain the log's channel
table names (:meth:`heatlog.logformat.Channel.chain_spec`: a sum of n 12-bit divider codes, a
Q15 ratio from an ADS1115 or an ESP32 microvolt divider, or a sum of n MAX31865 codes). The
first calibrated channel is also written as ``temp_C`` so ``heatlog reduce FILE.csv`` reads it.
Records with a probe fault are left out of the CSV and counted in the metadata.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from heatlog.device.archive import safe_name
from heatlog.errors import HeatlogError
from heatlog.logformat import Channel, RunLog, read_log
from heatlog.monitorlog import power_channels
from heatlog.probes import Chain, chain_from_spec, load_probe
from heatlog.probes.probefile import ProbeFile


def chain_for(ch: Channel, oversample: int) -> tuple[Chain, str]:
    """The reading chain for a logged channel's raw values, and its run-file spec."""
    spec = ch.chain_spec(oversample)
    return chain_from_spec(spec), spec


@dataclass(frozen=True)
class ChannelTable:
    name: str
    raw: np.ndarray
    resistance: np.ndarray | None
    temp_C: np.ndarray | None
    meta: dict[str, Any]
    volts: tuple[str, np.ndarray] | None = None  # a power monitor's channel: (column, V)


def calibrate(
    log: RunLog, probes: dict[str, ProbeFile]
) -> tuple[np.ndarray, list[ChannelTable], np.ndarray]:
    """Pure: (time_s, per-channel columns, mask of records kept) for a decoded run."""
    keep = log.fault_mask == 0
    t = log.offset_ms[keep] / 1000.0
    out = []
    monitors = {}
    for p in power_channels(log.header):
        bus, shunt = p.volts(log.raw[keep])
        monitors[p.bus_index] = ("bus_V", bus, p)
        monitors[p.shunt_index] = ("shunt_V", shunt, p)
    for i, ch in enumerate(log.header.channels):
        raw = log.raw[keep, i]
        if i in monitors:
            what, volts, p = monitors[i]
            meta_p: dict[str, Any] = {"index": i, "kind": ch.kind, "probe_id": ch.probe_id}
            meta_p.update(power_monitor=p.to_dict(), quantity=what)
            out.append(ChannelTable(f"ch{i}", raw, None, None, meta_p, (f"ch{i}_{what}", volts)))
            continue
        chain, spec = chain_for(ch, log.header.oversample)
        meta: dict[str, Any] = {
            "index": i,
            "kind": ch.kind,
            "probe_id": ch.probe_id,
            "ref_ohm": ch.ref_ohm,
            "chain": spec,
        }
        r = temp = None
        try:
            r = np.asarray(chain.to_resistance(raw), dtype=float) if raw.size else np.zeros(0)
            probe = probes.get(ch.probe_id)
            if probe is None:
                meta["calibrated"] = f"no probe file for {ch.probe_id!r}"
            else:
                temp = np.asarray(probe.model.resistance_to_temperature(r), dtype=float)
                meta.update(calibrated=True, probe_file_id=probe.id, probe_u_K=probe.uncertainty_K)
        except HeatlogError as exc:
            meta["calibrated"] = f"not calibrated: {exc}"
        out.append(ChannelTable(f"ch{i}", raw, r, temp, meta))
    return t, out, keep


def load_probes(probe_dir: Path | None, ids: list[str]) -> dict[str, ProbeFile]:
    """Probe files ``<probe_dir>/<probe id>.toml`` for the given ids (sanitised names)."""
    found: dict[str, ProbeFile] = {}
    if probe_dir is None:
        return found
    for pid in ids:
        p = Path(probe_dir) / f"{safe_name(pid, limit=64)}.toml"
        if p.is_file():
            found[pid] = load_probe(p)
    return found


def export_run(path: Path, probe_dir: Path | None = None, *, note: str = "") -> tuple[Path, Path]:
    """Write ``<stem>.csv`` and ``<stem>.json`` beside the pulled run file."""
    log = read_log(path)
    probes = load_probes(probe_dir, [c.probe_id for c in log.header.channels])
    t, chans, keep = calibrate(log, probes)
    cols: list[tuple[str, np.ndarray, str]] = [("time_s", t, "%.3f")]
    for c in chans:
        cols.append((f"{c.name}_raw", c.raw, "%d"))
        if c.resistance is not None:
            cols.append((f"{c.name}_resistance_ohm", c.resistance, "%.4f"))
        if c.temp_C is not None:
            cols.append((f"{c.name}_temp_C", c.temp_C, "%.5f"))
        if c.volts is not None:
            cols.append((c.volts[0], c.volts[1], "%.7g"))
    first = next((c for c in chans if c.temp_C is not None), None)
    if first is not None:
        cols.append(("temp_C", first.temp_C, "%.5f"))  # type: ignore[arg-type]
    h = log.header
    csv = path.with_suffix(".csv")
    lines = [f"# {note or 'heatlog run'}: board {safe_name(h.board_id)} run {h.run}"]
    lines.append(",".join(name for name, _, _ in cols))
    data = np.column_stack([c for _, c, _ in cols]) if t.size else np.zeros((0, len(cols)))
    fmts = [f for _, _, f in cols]
    lines += [",".join(f % v for f, v in zip(fmts, row, strict=True)) for row in data]
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    meta = {
        "source": path.name,
        "board_id": h.board_id,
        "firmware": h.firmware,
        "run": h.run,
        "interval_ms": h.interval_ms,
        "oversample": h.oversample,
        "anchor_ms": h.anchor_ms,
        "records": log.n_records,
        "excluded_fault_records": int((~keep).sum()),
        "segments": len(log.segments),
        "bad_blocks": log.bad_blocks,
        "bad_bytes": log.bad_bytes,
        "trailing_bytes": log.trailing_bytes,
        "damage": log.damage().to_dict() | {"summary": log.damage().describe()},
        "channels": [c.meta for c in chans],
        "temp_C_column": first.name if first is not None else None,
        "power_monitors": [
            dict(
                p.to_dict(),
                bus_col=f"ch{p.bus_index}_bus_V",
                shunt_col=f"ch{p.shunt_index}_shunt_V",
            )
            for p in power_channels(h)
        ],
    }
    js = path.with_suffix(".json")
    js.write_text(json.dumps(meta, indent=2), encoding="utf-8")
    return csv, js
