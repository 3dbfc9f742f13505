"""Seeded mutation of valid inputs: no traceback, and no changed answer without a finding.

Four kinds of file, all invented: a CSV thermogram (``heatlog reduce``), a probe's calibration
points (``heatlog probe fit``), a probe file written by ``probe fit --out`` and read back, and a
run file with its log (``heatlog reduce RUN.toml``). Each valid file is damaged the ways files
are damaged: truncated, a byte's bit flipped, a line deleted or duplicated, a cell turned into
text, NaN/inf or a huge number, re-encoded (UTF-16, Latin-1), a column or key renamed.

Every mutated file must end in one of three ways:

* a refusal: one :class:`~heatlog.errors.HeatlogError` line (never another exception);
* a result with a finding (the input gate's ``findings``, a fit warning): a correction (a spike
  left out, a unit converted) must give an answer that still agrees with the unmutated one
  within U (k = 2); a doubt (proportions no cup run has) only has to be printed;
* a result without a finding whose answer agrees with the unmutated answer within the mutated
  result's own expanded uncertainty (U, k = 2), i.e. the damage did not matter (a deleted
  interior row of a long log, a changed comment, a flipped last digit in the noise).

"Accepted without a finding" is the third case failing: the answer moved beyond what the
result itself states, and nothing said so. One kind of change is not counted as damage: in a
run file written by hand, a digit turned into another digit (``mass_g = 200`` → ``300``) is a
different, equally valid description of an experiment; no check can tell it from the intended
value, so run-file flips that leave a valid number are skipped (bounds and the closest-name
check catch the rest). Probe files carry a digest, so there every change counts.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest

from heatlog.errors import HeatlogError
from heatlog.probes import fit_resistance, load_probe
from heatlog.probes.probefile import probe_from_fit, save_probe
from heatlog.reduce import reduce_thermogram
from heatlog.reduce.synthetic import Release, synthetic_run
from heatlog.runfile import run_file
from heatlog.thermogram import read_thermogram_csv

EXAMPLES = Path(__file__).resolve().parents[2] / "host" / "heatlog" / "data" / "examples"
_NUMBER = re.compile(rb"-?\d+\.?\d*(?:[eE][-+]?\d+)?")


@dataclass
class Outcome:
    kind: str  # "refused", "flagged", "same", "SILENT" (accepted, changed, no finding)
    detail: str = ""


# ---- the mutations ---------------------------------------------------------------------------


def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


def _numbers(data: bytes, start: int) -> list[re.Match[bytes]]:
    return [m for m in _NUMBER.finditer(data) if m.start() >= start]


def mutate(data: bytes, rng: np.random.Generator, op: str, body_start: int) -> bytes | None:
    """One damaged copy of ``data`` (None when the operation does not apply)."""
    lines = _lines(data)
    if op == "truncate":
        return data[: int(rng.integers(1, len(data)))]
    if op == "flip":
        i = int(rng.integers(0, len(data)))
        return data[:i] + bytes([data[i] ^ (1 << int(rng.integers(0, 8)))]) + data[i + 1 :]
    if op in ("delete", "duplicate"):
        i = int(rng.integers(0, len(lines)))
        extra = [lines[i]] if op == "duplicate" else []
        return b"\n".join(lines[:i] + extra + lines[i:][0 if op == "duplicate" else 1 :])
    if op in ("text", "nan", "inf", "huge", "tiny", "negative"):
        nums = _numbers(data, body_start)
        if not nums:
            return None
        m = nums[int(rng.integers(0, len(nums)))]
        new = {
            "text": b"warm",
            "nan": b"nan",
            "inf": b"-inf" if rng.random() < 0.5 else b"inf",
            "huge": [b"1e308", b"1e160", b"-1e308", b"1e30", b"1e6"][int(rng.integers(0, 5))],
            "tiny": b"1e-300",
            "negative": b"-" + m.group(0).lstrip(b"-"),
        }[op]
        return data[: m.start()] + new + data[m.end() :]
    if op == "encoding":
        text = data.decode("utf-8")
        if rng.random() < 0.5:
            return text.encode("utf-16")
        return (
            text.replace("invented", "invented °") if "invented" in text else "° " + text
        ).encode("latin-1", errors="replace")
    if op == "rename":
        words = [m for m in re.finditer(rb"[A-Za-z_][A-Za-z_0-9]{2,}", data)]
        if not words:
            return None
        m = words[int(rng.integers(0, len(words)))]
        return data[: m.start()] + m.group(0)[:-1] + b"x" + data[m.end() :]
    raise AssertionError(op)


OPS = ("truncate", "flip", "delete", "duplicate", "text", "nan", "inf", "huge", "tiny",
       "negative", "encoding", "rename")  # fmt: skip


def _digit_to_digit(orig: bytes, new: bytes) -> bool:
    """True when a single byte changed from one digit into another (a plausible new value)."""
    if len(orig) != len(new):
        return False
    diff = [i for i in range(len(orig)) if orig[i] != new[i]]
    return len(diff) == 1 and chr(orig[diff[0]]).isdigit() and chr(new[diff[0]]).isdigit()


#: Finding codes that change the data (the result must then still be right); others are doubts.
CORRECTIONS = {"spike", "absurd", "sentinel", "time-unit", "temp-unit", "duplicate-row",
               "time-glitch", "flagged-rows", "read-as"}  # fmt: skip


def judge(evaluate, path: Path, data: bytes, base: tuple[float, float]) -> Outcome:
    path.write_bytes(data)
    try:
        value, big_u, findings = evaluate(path)
    except HeatlogError as exc:
        assert "\n" not in str(exc).strip(), str(exc)
        return Outcome("refused", str(exc))
    agrees = math.isfinite(value) and abs(value - base[0]) <= max(big_u, base[1], 1e-12)
    if findings:
        # a correction (a spike left out, a unit converted) must also be right: the corrected
        # answer agrees with the unmutated one; a doubt (odd proportions, no sample) only has to
        # be said, and no answer at all, said so, is honest too
        corrected = [f for f in findings if f.split(" ", 1)[0] in CORRECTIONS]
        honest = agrees or math.isnan(value) or not corrected
        return Outcome("flagged" if honest else "WRONG", "; ".join(findings))
    if math.isfinite(value) and abs(value - base[0]) <= max(big_u, 1e-12):
        return Outcome("same")
    return Outcome("SILENT", f"{base[0]!r} → {value!r} (U = {big_u:.3g})")


def sweep(
    evaluate,
    folder: Path,
    name: str,
    original: bytes,
    seed: int,
    n: int,
    *,
    body_start=0,
    skip_digit_flips=False,
):
    """Apply ``n`` seeded mutations and return the outcomes (the unmutated answer first)."""
    path = folder / name
    path.write_bytes(original)
    value, big_u, findings = evaluate(path)
    assert not findings, findings  # the valid file is clean
    rng = np.random.default_rng(seed)
    outcomes: list[tuple[str, Outcome]] = []
    while len(outcomes) < n:
        op = OPS[len(outcomes) % len(OPS)]
        data = mutate(original, rng, op, body_start)
        if data is None or data == original:
            continue
        if skip_digit_flips and _digit_to_digit(original, data):
            continue
        outcomes.append((op, judge(evaluate, path, data, (value, big_u))))
    path.write_bytes(original)
    return outcomes


def _assert_no_silent(outcomes, what, both=True):
    silent = [(op, o.kind, o.detail) for op, o in outcomes if o.kind in ("SILENT", "WRONG")]
    kinds = {k: sum(o.kind == k for _, o in outcomes) for k in ("refused", "flagged", "same")}
    assert not silent, f"{what}: accepted without a finding: {silent} (others: {kinds})"
    assert kinds["refused"], kinds
    if both:  # the sweep bites both ways: some damage is harmless or corrected
        assert kinds["same"] + kinds["flagged"], kinds


# ---- the four kinds of file ------------------------------------------------------------------


@pytest.fixture(scope="module")
def cup():
    return cup_log()


def cup_log() -> bytes:
    """An invented cup run (+2 K electrical heating at 300 s, 3 s sampling) as CSV bytes."""
    run = synthetic_run(
        releases=(Release(300.0, 2.0, 30.0, kind="heater"),),
        duration_s=900.0,
        dt_s=3.0,
        k_per_s=2e-4,
        noise_K=0.002,
        probe_lag_s=2.0,
        seed=11,
    )
    rows = "\n".join(
        f"{a:.1f},{b:.4f}"
        for a, b in zip(run.thermogram.time_s, run.thermogram.temp_C, strict=True)
    )
    return ("# invented data\ntime_s,temp_C\n" + rows + "\n").encode("utf-8")


def _reduce(path: Path):
    th = read_thermogram_csv(path)
    red = reduce_thermogram(th)
    return red.delta_t_K, red.U_delta_t_K, [f"{f.code} {f.text()}" for f in th.metadata["findings"]]


def test_mutated_thermograms(cup, tmp_path):
    outcomes = sweep(_reduce, tmp_path, "run.csv", cup, seed=1, n=120, body_start=30)
    _assert_no_silent(outcomes, "thermogram")


R_CHECK = np.array([30000.0, 10000.0, 4000.0])  # Ω: temperatures read at these resistances


def _points(path: Path):
    from heatlog.cli.probe import _read_points

    temps, values, _ = _read_points(path, None)
    fit = fit_resistance(temps, values, "steinhart-hart", ref_u_K=0.01)
    probe = probe_from_fit(fit, "ntc", reference="invented", calibration_date=_DATE)
    t = np.asarray(probe.model.resistance_to_temperature(R_CHECK))
    err = float(np.max(np.abs(t - _points.base))) if hasattr(_points, "base") else 0.0
    return err, 2 * probe.uncertainty_K, [f"fit-warning {w}" for w in fit.warnings]


_DATE = __import__("datetime").date(2026, 11, 30)


def test_mutated_probe_points(tmp_path):
    original = (EXAMPLES / "ntc_10k_calibration.csv").read_bytes()
    path = tmp_path / "points.csv"
    path.write_bytes(original)
    temps = load_points_base(path)
    _points.base = temps  # type: ignore[attr-defined]
    outcomes = sweep(
        _points,
        tmp_path,
        "points.csv",
        original,
        seed=2,
        n=120,
        body_start=original.index(b"temp_C,"),
    )
    _assert_no_silent(outcomes, "probe points")


def load_points_base(path: Path) -> np.ndarray:
    from heatlog.cli.probe import _read_points

    temps, values, _ = _read_points(path, None)
    fit = fit_resistance(temps, values, "steinhart-hart", ref_u_K=0.01)
    return np.asarray(fit.model.resistance_to_temperature(R_CHECK))


def _probe_file(path: Path):
    probe = load_probe(path)
    t = np.asarray(probe.model.resistance_to_temperature(R_CHECK))
    return float(np.sum(t)), 2 * probe.uncertainty_K, []


def test_mutated_probe_files(tmp_path):
    from heatlog.cli.probe import _read_points

    temps, values, _ = _read_points(EXAMPLES / "ntc_10k_calibration.csv", None)
    fit = fit_resistance(temps, values, "steinhart-hart", ref_u_K=0.01)
    save_probe(
        probe_from_fit(fit, "ntc", reference="invented", calibration_date=_DATE),
        tmp_path / "p.toml",
    )
    original = (tmp_path / "p.toml").read_bytes()
    outcomes = sweep(_probe_file, tmp_path, "p.toml", original, seed=3, n=72)
    _assert_no_silent(outcomes, "probe file", both=False)  # the digest refuses every change


RUN = """# invented data
title = "invented dissolution"
[log]
file = "run.csv"
time_col = "time_s"
temp_col = "temp_C"
[calorimeter]
heat_capacity_J_per_K = 40.0
u_heat_capacity_J_per_K = 1.5
[[contents]]
name = "water"
mass_g = 200.0
u_mass_g = 0.05
cp = "water"
[sample]
name = "salt"
mass_g = 5.0
u_mass_g = 0.002
molar_mass_g_per_mol = 80.0
"""


def _run(path: Path):
    res = run_file(path)
    if res.specific is None:  # no answer at all counts as a changed one
        return math.nan, math.nan, [f"{f.code} {f.text()}" for f in res.findings]
    return res.specific.value, res.specific.expanded, [f"{f.code} {f.text()}" for f in res.findings]


def test_mutated_run_files(cup, tmp_path):
    (tmp_path / "run.csv").write_bytes(cup)
    outcomes = sweep(
        _run, tmp_path, "run.toml", RUN.encode("utf-8"), seed=4, n=120, skip_digit_flips=True
    )
    _assert_no_silent(outcomes, "run file")
