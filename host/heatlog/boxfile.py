"""Box files: an insulated box's heat capacity C and heat-loss coefficient G, as ``heatlog box
fit`` writes them and ``heatlog profile --box`` and a run file's ``[profile] box = "…"`` read them.

Layout (TOML, every key required unless marked)::

    # heatlog box file: written by `heatlog box fit`
    heat_capacity_J_per_K = 2480.0      # C of the box as loaded during the fit, J/K
    u_heat_capacity_J_per_K = 35.0      # standard uncertainty (k = 1)
    loss_W_per_K = 0.0301               # G, W/K
    u_loss_W_per_K = 0.0009             # standard uncertainty (k = 1)
    method = "heating-curve fit"        # or "cooling-curve fit (C given)"
    correlation_C_G = 0.62              # optional: correlation of C and G from the fit
    log = "heater_run.csv"              # optional: the run it was fitted to
    fitted_utc = "2026-12-02T06:30:00Z" # optional
    residual_rms_K = 0.004              # optional

Reading checks every value (finite, C and G positive, uncertainties ≥ 0) and refuses unknown
keys, so a damaged or hand-edited file ends in one clear line.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from heatlog.errors import InputError
from heatlog.gum import Input

REQUIRED = (
    "heat_capacity_J_per_K",
    "u_heat_capacity_J_per_K",
    "loss_W_per_K",
    "u_loss_W_per_K",
    "method",
)
OPTIONAL = ("correlation_C_G", "log", "fitted_utc", "residual_rms_K", "samples", "note")


@dataclass(frozen=True)
class BoxFile:
    """C and G of a box with their standard uncertainties (k = 1) and how they were found."""

    heat_capacity: Input
    loss: Input
    method: str
    correlation: float | None = None
    extra: tuple[tuple[str, Any], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        doc: dict[str, Any] = {
            "heat_capacity_J_per_K": self.heat_capacity.value,
            "u_heat_capacity_J_per_K": self.heat_capacity.u,
            "loss_W_per_K": self.loss.value,
            "u_loss_W_per_K": self.loss.u,
            "method": self.method,
        }
        if self.correlation is not None:
            doc["correlation_C_G"] = self.correlation
        doc.update(dict(self.extra))
        return doc

    def profile_keys(self) -> dict[str, float]:
        """The ``[profile]`` table keys this box supplies."""
        return {
            "heat_capacity_J_per_K": self.heat_capacity.value,
            "u_heat_capacity_J_per_K": self.heat_capacity.u,
            "loss_W_per_K": self.loss.value,
            "u_loss_W_per_K": self.loss.u,
        }


def _number(doc: dict[str, Any], key: str, where: str, *, positive: bool) -> float:
    value = doc[key]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{where}: {key} must be a finite number, got {value!r}")
    if positive and not value > 0:
        raise InputError(f"{where}: {key} must be positive, got {value!r}")
    if not positive and value < 0:
        raise InputError(f"{where}: {key} must not be negative, got {value!r}")
    return float(value)


def parse_box(doc: dict[str, Any], where: str) -> BoxFile:
    """Check a box file's parsed TOML (no file access)."""
    missing = [k for k in REQUIRED if k not in doc]
    if missing:
        raise InputError(
            f"{where}: missing key(s) {', '.join(missing)}; write it with `heatlog box fit`"
        )
    unknown = sorted(set(doc) - set(REQUIRED) - set(OPTIONAL))
    if unknown:
        raise InputError(
            f"{where}: unknown key(s) {', '.join(unknown)}; use {', '.join(REQUIRED + OPTIONAL)}"
        )
    c = _number(doc, "heat_capacity_J_per_K", where, positive=True)
    u_c = _number(doc, "u_heat_capacity_J_per_K", where, positive=False)
    g = _number(doc, "loss_W_per_K", where, positive=True)
    u_g = _number(doc, "u_loss_W_per_K", where, positive=False)
    if u_c == 0 or u_g == 0:
        raise InputError(
            f"{where}: C and G need their uncertainties (u_… > 0); a fit always has one"
        )
    corr = None
    if "correlation_C_G" in doc:
        corr = doc["correlation_C_G"]
        if isinstance(corr, bool) or not isinstance(corr, (int, float)) or not -1.0 <= corr <= 1.0:
            raise InputError(f"{where}: correlation_C_G must lie in [-1, 1], got {corr!r}")
    corr = None if corr is None else float(corr)
    extra = tuple((k, doc[k]) for k in OPTIONAL if k in doc and k != "correlation_C_G")
    return BoxFile(
        Input(c, u_c, "J/K", note=f"box file {Path(where).name}"),
        Input(g, u_g, "W/K", note=f"box file {Path(where).name}"),
        str(doc["method"]),
        corr,
        extra,
    )


def load_box(path: str | Path) -> BoxFile:
    """Read and check a box file."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{p}: no such box file; write one with `heatlog box fit`") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the box file ({exc})") from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{p}: not valid TOML ({exc})") from None
    return parse_box(doc, str(p))


def box_to_toml(box: BoxFile) -> str:
    import tomli_w

    head = (
        "# heatlog box file: C and G of an insulated box, written by `heatlog box fit`.\n"
        '# Read by `heatlog profile --box FILE` and by a run file\'s [profile] box = "FILE".\n'
        "# C is the box as loaded during the fit; uncertainties are standard (k = 1).\n"
    )
    return head + tomli_w.dumps(box.to_dict())
