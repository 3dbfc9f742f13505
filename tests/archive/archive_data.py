"""Invented test data for the archive tests (invented data): board run logs written byte by byte
from the layout in firmware/LOGFORMAT.md, linear platinum-RTD probe files, and run files.

The probes are Callendar–Van Dusen curves with B = C = 0 (R = R0 (1 + A t)), so a change of R0 or
A maps every temperature through an exact straight line: with W = R/R0,
t₂ = (W·R0₁/R0₂ − 1)/A₂ = b·t₁ + a, b = (R0₁/R0₂)(A₁/A₂), a = (R0₁/R0₂ − 1)/A₂.
"""

from __future__ import annotations

import binascii
import functools
import struct
import zlib
from pathlib import Path

import numpy as np

from heatlog.reduce.synthetic import Release, synthetic_run

R_REF = 430.0  # MAX31865 reference resistor, Ω
OVERSAMPLE = 4
R0_1, A_1 = 100.0, 3.9083e-3  # probe calibration v1
R0_2, A_2 = 100.06, 3.9083e-3 * 1.003  # probe calibration v2 (invented recalibration)
SLOPE = (R0_1 / R0_2) * (A_1 / A_2)
OFFSET_K = (R0_1 / R0_2 - 1.0) / A_2


def probe_toml(probe_id: str, date: str, r0: float, a: float, u_k: float = 0.02) -> str:
    return (
        "# invented data\n"
        f'id = "{probe_id}"\nkind = "rtd"\nmodel = "callendar-van-dusen"\n'
        f'calibration_date = {date}\nreference = "invented reference, u = 0.01 K"\n'
        f"valid_range_C = [0.0, 100.0]\nuncertainty_K = {u_k}\n\n"
        f"[coefficients]\nR0 = {r0!r}\nA = {a!r}\nB = 0.0\nC = 0.0\n"
    )


def code_sums(temp_C: np.ndarray, seed: int) -> np.ndarray:
    """Temperatures through the v1 probe → MAX31865 sums of OVERSAMPLE codes, with read noise."""
    rng = np.random.default_rng(seed)
    r = R0_1 * (1.0 + A_1 * temp_C)
    sums = r / R_REF * 32768 * OVERSAMPLE + rng.normal(0.0, 2.0, temp_C.size)
    return np.round(sums).astype(np.int64)


@functools.lru_cache(maxsize=8)
def invented_run(seed: int, delta_t_K: float = 2.0):
    """(time_s, code sums) of an invented calorimetry run with one release at 600 s (cached:
    treat the arrays as read-only)."""
    run = synthetic_run(
        releases=(Release(600.0, delta_t_K, 30.0),),
        duration_s=2400.0,
        dt_s=2.0,
        k_per_s=4e-4,
        jacket_C=22.5,
        start_C=21.0,
        probe_lag_s=3.0,
        seed=seed,
    )
    return run.thermogram.time_s, code_sums(run.thermogram.temp_C, seed + 1)


def log_bytes(
    board_id: str,
    run: int,
    probe_ids: list[str],
    raw: np.ndarray,
    offsets_ms: np.ndarray,
    anchor_ms: int | None = 1_780_000_000_000,
    interval_ms: int = 2000,
) -> bytes:
    """A board run log (format 1) with MAX31865 4-wire channels (kind 3)."""
    n = len(probe_ids)
    hsize, rsize = 64 + 24 * n + 4, 14 + 4 * n
    head = struct.pack(
        "<4sHHHBBIHHqI16s16s", b"HLOG", 1, hsize, rsize, n, 1 if anchor_ms else 0,
        interval_ms, OVERSAMPLE, 0, anchor_ms or 0, run, board_id.encode(), b"test-fw",
    )  # fmt: skip
    for pid in probe_ids:
        head += struct.pack("<BBBBI16s", 3, 4, 5, 0, int(R_REF * 1000), pid.encode())
    head += struct.pack("<I", zlib.crc32(head))
    raw = np.asarray(raw).reshape(len(offsets_ms), n)
    blocks = []
    for seq, (off, row) in enumerate(zip(offsets_ms, raw, strict=True)):
        body = struct.pack(f"<BBHII{n}i", 0xA5, 0, 0, seq, int(off), *(int(v) for v in row))
        blocks.append(body + struct.pack("<H", binascii.crc_hqx(body, 0xFFFF)))
    return head + b"".join(blocks)


def write_run_file(folder: Path, name: str, seed: int, probe_file: str, shift: int = 0) -> Path:
    """A run file with its log CSV of code sums: fixed heat capacity and c_p so ΔH ∝ ΔT.
    ``shift`` adds to every code sum (distinct files from one invented run)."""
    t, sums = invented_run(seed)
    sums = sums + shift
    csv = folder / f"{name}.csv"
    csv.write_text(
        "# invented data\ntime_s,codes\n"
        + "".join(f"{a:.1f},{b}\n" for a, b in zip(t, sums, strict=True)),
        encoding="utf-8",
    )
    path = folder / f"{name}.toml"
    path.write_text(
        f'# invented data\ntitle = "{name}"\n[log]\nfile = "{csv.name}"\nraw_col = "codes"\n'
        f'chain = "max31865:rref={R_REF:g},lead=0,n={OVERSAMPLE}"\nprobe = "{probe_file}"\n'
        "[calorimeter]\nheat_capacity_J_per_K = 40.0\nu_heat_capacity_J_per_K = 1.0\n"
        '[[contents]]\nname = "water"\nmass_g = 100.0\nu_mass_g = 0.05\ncp = 4.18\nu_cp = 0.01\n'
        '[sample]\nname = "salt"\nmass_g = 5.0\nu_mass_g = 0.002\nmolar_mass_g_per_mol = 80.0\n',
        encoding="utf-8",
    )
    return path
