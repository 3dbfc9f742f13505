"""Safety flags for products that touch skin (hand warmers, cold packs) and for setting materials.

Contact burns depend on temperature *and* time. The classic human data (Moritz & Henriques 1947,
from memory) put the threshold near 44 °C for about 6 h of contact, with the time roughly halving
for every further 1 °C up to about 51 °C. Here that rule gives a contact time to a burn threshold

    t_burn(T) = 6 h · 2^−(T − 44 °C)      for T ≥ 43 °C

(extrapolated, and so conservative, above 51 °C), and the exposure index Σ Δt / t_burn(T_a) over
the log — 1 means the logged temperature, held on skin for the logged time, reaches the rule's
burn threshold. ISO 13732-1 gives burn thresholds for touching hot surfaces; those are thresholds
for guidance, not limits for products, and no product standard's limits are used here.

Cold injury: contact below 0 °C can freeze skin (frostbite); packs that reach it are flagged.

The flags are computed from the logged temperature, which may not be the temperature of the
surface touching skin. They are guidance, never a clearance: follow the product's safety data
sheet and the rules that apply where you are.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from heatlog.profile.metrics import time_beyond

#: Temperature from which prolonged contact is flagged (Moritz & Henriques 1947, from memory).
PROLONGED_CONTACT_C = 43.0
#: Reference point of the burn-time rule: about 6 h at 44 °C (Moritz & Henriques 1947, from memory).
BURN_REF_C = 44.0
BURN_REF_H = 6.0
#: Contact time (h) above PROLONGED_CONTACT_C from which the flag is raised (common practice, no source).
PROLONGED_CONTACT_H = 1.0
#: Freezing: below this, skin contact risks cold injury.
FREEZING_C = 0.0

MOSTLY = (
    "The flags use the logged temperature, which may differ from the surface that touches skin. "
    "Children, older people, people with diabetes or reduced sensation, and anyone asleep can be "
    "hurt at lower temperatures and shorter times. Follow the product's safety data sheet and "
    "local rules; these flags are guidance, not a clearance."
)
SOURCE_BURN = "Moritz & Henriques 1947 (from memory); ISO 13732-1 gives thresholds, not limits"


@dataclass(frozen=True)
class SafetyFlag:
    """One finding: ``level`` is "info", "caution" or "warning"."""

    level: str
    code: str
    message: str
    source: str

    def to_dict(self) -> dict[str, str]:
        return {
            "level": self.level,
            "code": self.code,
            "message": self.message,
            "source": self.source,
        }


def burn_time_h(temp_C: np.ndarray | float) -> np.ndarray:
    """Contact time (h) to a burn threshold by the halving rule; inf below 43 °C."""
    y = np.asarray(temp_C, dtype=np.float64)
    t = BURN_REF_H * np.exp2(-(y - BURN_REF_C))
    return np.where(y >= PROLONGED_CONTACT_C, t, np.inf)


def burn_exposure(time_s: np.ndarray, temp_C: np.ndarray, skip: np.ndarray | None = None) -> float:
    """Σ Δt / t_burn(T_a) along the log (dimensionless; 1 = the rule's burn threshold)."""
    y = np.asarray(temp_C, dtype=np.float64)
    t_a = 0.5 * (y[1:] + y[:-1])
    dt_h = np.diff(time_s) / 3600.0
    dose = dt_h / burn_time_h(t_a)
    if skip is not None:
        dose = np.where(skip, 0.0, dose)
    return float(np.sum(dose))


def _hours(s: float) -> str:
    return f"{s / 3600.0:.2f} h" if s >= 3600 else f"{s / 60.0:.1f} min"


def safety_flags(
    time_s: np.ndarray,
    temp_C: np.ndarray,
    *,
    kind: str,
    skip: np.ndarray | None = None,
) -> list[SafetyFlag]:
    """The safety findings for one segment; always ends with the general caution."""
    t = np.asarray(time_s, dtype=np.float64)
    y = np.asarray(temp_C, dtype=np.float64)
    flags: list[SafetyFlag] = []
    if kind == "cement":
        flags.append(
            SafetyFlag(
                "info",
                "alkaline-material",
                "Wet cement and mortar are strongly alkaline and can cause chemical burns: wear gloves "
                "and eye protection, and wash skin promptly; see the product's safety data sheet.",
                "common practice, no source",
            )
        )
        if float(np.min(y)) < FREEZING_C:
            flags.append(
                SafetyFlag(
                    "caution",
                    "early-frost",
                    f"The sample fell to {float(np.min(y)):.1f} °C: fresh mortar or concrete that freezes "
                    "early can be damaged; check local rules for cold-weather work.",
                    "common practice, no source",
                )
            )
    else:
        hot_s = time_beyond(t, y, PROLONGED_CONTACT_C, 1, skip)
        dose = burn_exposure(t, y, skip)
        peak = float(np.max(y))
        if dose >= 1.0:
            flags.append(
                SafetyFlag(
                    "warning",
                    "contact-burn",
                    f"Held on skin for the logged time, this temperature history reaches a contact-burn "
                    f"threshold (exposure index {dose:.2f} ≥ 1; about 6 h at 44 °C, time halving per "
                    f"+1 °C). Do not use directly on skin; never sleep on it.",
                    SOURCE_BURN,
                )
            )
        elif hot_s >= PROLONGED_CONTACT_H * 3600.0 or dose >= 0.1:
            flags.append(
                SafetyFlag(
                    "caution",
                    "prolonged-contact",
                    f"{_hours(hot_s)} at or above {PROLONGED_CONTACT_C:g} °C (exposure index {dose:.2f}): "
                    "prolonged contact at these temperatures can burn; keep a layer of cloth between it "
                    "and skin and limit the time.",
                    SOURCE_BURN,
                )
            )
        if peak >= BURN_REF_C + 4.0:
            flags.append(
                SafetyFlag(
                    "warning",
                    "hot-surface",
                    f"Peak {peak:.1f} °C: by the halving rule a burn threshold is reached after about "
                    f"{_hours(float(burn_time_h(peak)) * 3600.0)} of contact at this temperature.",
                    SOURCE_BURN + "; above 51 °C the rule is extrapolated",
                )
            )
        cold_s = time_beyond(t, y, FREEZING_C, -1, skip)
        if cold_s > 0:
            flags.append(
                SafetyFlag(
                    "warning",
                    "cold-injury",
                    f"{_hours(cold_s)} below {FREEZING_C:g} °C (minimum {float(np.min(y)):.1f} °C): "
                    "contact below freezing can cause frostbite; wrap the pack in cloth and limit use "
                    "to short periods.",
                    "common practice, no source",
                )
            )
    flags.append(SafetyFlag("info", "general", MOSTLY, "common practice, no source"))
    return flags
