"""Probe files: one small TOML file per probe holding its model, coefficients and calibration.

Example (all keys but ``fit`` and ``constants`` are required)::

    id = "ntc-01"
    kind = "thermistor"            # or "rtd"
    model = "steinhart-hart"       # steinhart-hart, steinhart-hart-4, beta, callendar-van-dusen
    calibration_date = 2026-11-30  # a TOML date
    reference = "Pt100 class A, ice point + stirred bath"
    valid_range_C = [0.0, 80.0]
    uncertainty_K = 0.02           # standard uncertainty, k = 1

    [coefficients]                 # by their published names
    A = 1.129148e-3
    B = 2.34125e-4
    C = 8.76741e-8

    time_constant_s = 4.2          # optional: first-order response time (plunge test) and its
    u_time_constant_s = 0.3        # standard uncertainty; both or neither (heatlog probe tau)

    [constants]                    # stated, not fitted (β model: T25_C)
    [fit]                          # optional summary: n_points, dof, rms_residual_K, ...

Written with ``tomli_w``, read with ``tomllib``; every problem ends in one
:class:`~heatlog.errors.CalibrationError` line naming the file and the key.
"""

from __future__ import annotations

import datetime as dt
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import tomli_w

from heatlog.errors import CalibrationError, HeatlogError
from heatlog.probes.digest import probe_digest
from heatlog.probes.fitting import CalibrationFit
from heatlog.probes.models import MODEL_KINDS, MODEL_NAMES, ProbeModel, build_model

# Letters and digits of any script (\w on str), then also '.', '_' or '-'.
_ID = re.compile(r"^[^\W_][\w.\-]{0,63}$")
ID_RULE = "1–64 letters (any alphabet), digits, '.', '_' or '-', starting with a letter or digit"


def valid_probe_id(text: object) -> bool:
    """Whether ``text`` can be a probe id (:data:`ID_RULE`)."""
    return isinstance(text, str) and _ID.fullmatch(text) is not None


_REQUIRED = (
    "id",
    "kind",
    "model",
    "calibration_date",
    "reference",
    "valid_range_C",
    "uncertainty_K",
    "coefficients",
)
_OPTIONAL = ("constants", "fit", "time_constant_s", "u_time_constant_s")
_CONSTANTS = ("T25_C",)


@dataclass(frozen=True, eq=False)
class ProbeFile:
    """A probe: its id, a model usable by every conversion, and how it was calibrated."""

    id: str
    model: ProbeModel
    calibration_date: dt.date
    reference: str
    uncertainty_K: float  # standard uncertainty (k = 1) of a temperature from this probe
    fit: dict[str, Any] = field(default_factory=dict)
    time_constant_s: float | None = None  # first-order response time, s (plunge test)
    u_time_constant_s: float | None = None

    @property
    def kind(self) -> str:
        return self.model.kind

    @property
    def valid_range_C(self) -> tuple[float, float]:
        return (self.model.t_min_C, self.model.t_max_C)

    def curve_modes(self, r_from: float, r_to: float) -> list[float]:
        """Independent parts of the calibration curve's error in T(r_to) − T(r_from), in K.

        The fitted coefficients' covariance Σ (stored by ``probe fit``) is split into independent
        modes, Σ = Σ_i λ_i v_i v_iᵀ; with g = ∂T/∂θ(r_to) − ∂T/∂θ(r_from) the change owes
        g·v_i·√λ_i to mode i, and the squares add up to gᵀΣg (JCGM 100, 5.2 for correlated
        inputs). Offsets common to both ends cancel. Two differences read with the same probe
        share the modes, so their errors are correlated exactly as the curve makes them. Empty
        when the file holds no covariance (written by hand or by an older heatlog).
        """
        cov = self.fit.get("covariance")
        fitted = self.fit.get("fitted")
        if not cov or not fitted:
            return []
        sigma = np.asarray(cov, dtype=np.float64)
        names = list(self.model.coefficients())
        cols = [names.index(k) for k in fitted]
        sens = self.model.coefficient_sensitivities(np.array([r_from, r_to], dtype=np.float64))
        g = sens[1, cols] - sens[0, cols]
        lam, vec = np.linalg.eigh(0.5 * (sigma + sigma.T))
        return [float(g @ vec[:, i] * math.sqrt(max(lam[i], 0.0))) for i in range(lam.size)]

    def to_dict(self) -> dict[str, Any]:
        doc: dict[str, Any] = {
            "id": self.id,
            "kind": self.kind,
            "model": self.model.name,
            "calibration_date": self.calibration_date,
            "reference": self.reference,
            "valid_range_C": [float(v) for v in self.valid_range_C],
            "uncertainty_K": float(self.uncertainty_K),
            "coefficients": {k: float(v) for k, v in self.model.coefficients().items()},
        }
        t25 = getattr(self.model, "T25_C", None)
        if t25 is not None:
            doc["constants"] = {"T25_C": float(t25)}
        if self.time_constant_s is not None:
            doc["time_constant_s"] = float(self.time_constant_s)
            doc["u_time_constant_s"] = float(self.u_time_constant_s or 0.0)
        if self.fit:
            doc["fit"] = dict(self.fit)
        return doc


def probe_from_fit(
    fit: CalibrationFit,
    probe_id: str,
    *,
    reference: str,
    calibration_date: dt.date,
    uncertainty_K: float | None = None,
) -> ProbeFile:
    """A probe file from a fit.

    The uncertainty (k = 1) defaults to √(max u(t)² + s²): the largest combined curve uncertainty
    over the range (fit covariance and reference) with the points' scatter s about the curve
    added, since a single reading is off the mean curve by lack of fit as much as by noise.
    """
    table = fit.u_table()
    u = math.hypot(table["max_u_K"], fit.residual_sd_K) if uncertainty_K is None else uncertainty_K
    summary = {
        "n_points": int(fit.temp_C.size),
        "dof": fit.dof,
        "rms_residual_K": fit.rms_residual_K,
        "max_abs_residual_K": fit.max_abs_residual_K,
        "max_u_fit_K": float(max(table["u_fit_K"])),
        "ref_u_K": fit.ref_u_K,
        "fitted": list(fit.fitted),
        # Σ of the fitted coefficients, in "fitted" order: what a temperature *difference* from
        # this probe owes to its calibration curve (see ProbeFile.curve_modes)
        "covariance": [[float(v) for v in row] for row in np.atleast_2d(fit.covariance)],
    }
    probe = ProbeFile(probe_id, fit.model, calibration_date, reference, float(u), summary)
    summary["digest"] = probe_digest(probe.to_dict())  # a later edit or damage is refused
    return parse_probe(probe_to_toml(probe), "fitted probe")  # one validation path


def probe_to_toml(probe: ProbeFile) -> str:
    return tomli_w.dumps(probe.to_dict())


def _number(doc: dict[str, Any], key: str, where: str) -> float:
    value = doc[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise CalibrationError(f"{where}: {key} must be a finite number, got {value!r}")
    return float(value)


def parse_probe(text: str, where: str = "probe file") -> ProbeFile:
    """Parse and validate the TOML text of a probe file."""
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CalibrationError(f"{where}: not valid TOML ({exc})") from None
    missing = [k for k in _REQUIRED if k not in doc]
    if missing:
        raise CalibrationError(f"{where}: missing key(s) {', '.join(missing)}")
    unknown = sorted(set(doc) - set(_REQUIRED) - set(_OPTIONAL))
    if unknown:
        raise CalibrationError(f"{where}: unknown key(s) {', '.join(unknown)}")
    probe_id = doc["id"]
    if not valid_probe_id(probe_id):
        raise CalibrationError(f"{where}: id must be {ID_RULE}, got {probe_id!r}")
    name = doc["model"]
    if name not in MODEL_NAMES:
        raise CalibrationError(
            f"{where}: model must be one of {', '.join(MODEL_NAMES)}, got {name!r}"
        )
    if doc["kind"] != MODEL_KINDS[name]:
        raise CalibrationError(
            f"{where}: kind {doc['kind']!r} does not match model {name} (a {MODEL_KINDS[name]})"
        )
    date = doc["calibration_date"]
    if isinstance(date, str):
        try:
            date = dt.date.fromisoformat(date)
        except ValueError:
            date = None
    if isinstance(date, dt.datetime):
        date = date.date()
    if not isinstance(date, dt.date):
        raise CalibrationError(f"{where}: calibration_date must be a date such as 2026-11-30")
    if not isinstance(doc["reference"], str) or not doc["reference"].strip():
        raise CalibrationError(f"{where}: reference must name the reference thermometer used")
    rng = doc["valid_range_C"]
    if (
        not isinstance(rng, list)
        or len(rng) != 2
        or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in rng)
    ):
        raise CalibrationError(f"{where}: valid_range_C must be two numbers [low, high] in °C")
    u = _number(doc, "uncertainty_K", where)
    if u < 0:
        raise CalibrationError(f"{where}: uncertainty_K must be ≥ 0, got {u:g}")
    coeffs = doc["coefficients"]
    constants = doc.get("constants", {})
    fit = doc.get("fit", {})
    for key, table in (("coefficients", coeffs), ("constants", constants), ("fit", fit)):
        if not isinstance(table, dict):
            raise CalibrationError(f"{where}: [{key}] must be a table")
    _check_covariance(fit, where)
    if "digest" in fit and fit["digest"] != probe_digest(doc):
        raise CalibrationError(
            f"{where}: the file's content no longer matches the digest that 'heatlog probe fit' "
            "wrote into [fit] (the file was damaged or edited); fit the probe again, or delete "
            "the digest line if the edit was deliberate"
        )
    bad_const = sorted(set(constants) - set(_CONSTANTS))
    if bad_const:
        raise CalibrationError(f"{where}: unknown constant(s) {', '.join(bad_const)}")
    try:
        model = build_model(name, coeffs, (float(rng[0]), float(rng[1])), **constants)
    except HeatlogError as exc:
        raise CalibrationError(f"{where}: {exc}") from None
    tau = u_tau = None
    if ("time_constant_s" in doc) != ("u_time_constant_s" in doc):
        raise CalibrationError(
            f"{where}: give time_constant_s and u_time_constant_s together (or neither)"
        )
    if "time_constant_s" in doc:
        tau, u_tau = (
            _number(doc, "time_constant_s", where),
            _number(doc, "u_time_constant_s", where),
        )
        if not (0 <= tau <= 3600.0 and u_tau >= 0):
            raise CalibrationError(
                f"{where}: time_constant_s must lie in 0–3600 s and u_time_constant_s be ≥ 0, "
                f"got {tau:g} and {u_tau:g}"
            )
    return ProbeFile(probe_id, model, date, doc["reference"].strip(), u, fit, tau, u_tau)


def _check_covariance(fit: dict[str, Any], where: str) -> None:
    """[fit] covariance, when present, is a square table of numbers matching [fit] fitted."""
    cov, fitted = fit.get("covariance"), fit.get("fitted")
    if cov is None:
        return
    n = len(fitted) if isinstance(fitted, list) else -1
    ok = (
        isinstance(cov, list)
        and len(cov) == n
        and all(isinstance(row, list) and len(row) == n for row in cov)
        and all(
            isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
            for row in cov
            for v in row
        )
    )
    if not ok:
        raise CalibrationError(
            f"{where}: [fit] covariance must be a {max(n, 0)}×{max(n, 0)} table of numbers matching "
            "[fit] fitted; refit the probe or delete both keys"
        )


def load_probe(path: str | Path) -> ProbeFile:
    """Read and validate a probe file."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CalibrationError(f"{p}: no such probe file") from None
    except (IsADirectoryError, UnicodeDecodeError):
        raise CalibrationError(f"{p}: not a TOML text file") from None
    except OSError as exc:
        raise CalibrationError(f"{p}: cannot read ({exc.strerror})") from None
    return parse_probe(text, str(p))


def save_probe(probe: ProbeFile, path: str | Path) -> None:
    """Write a probe file (TOML)."""
    Path(path).write_text(probe_to_toml(probe), encoding="utf-8")
