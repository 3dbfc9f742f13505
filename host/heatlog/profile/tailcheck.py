"""Is Q(t) still drifting after the release has ended? A sign of a wrong heat-loss coefficient.

Once a warmer or a pack has stopped releasing heat, Q(t) = C·(T − T(0)) + G·∫(T − T_env)dt must
level off. With G off by ΔG it keeps moving as ΔG·∫(T − T_env)dt, in proportion to the loss
integral. On the last quarter of the segment Q is fitted as a + β·∫(T − T_env)dt (least squares);
a β that is significant (over 3 standard uncertainties and over 2 % of G) and moves Q by more than
twice the noise of Q (C·√2·u_r) is flagged, with the G that would make Q level (G − β). No fit
on the tail can tell a wrong G from a release that goes on (both make Q move in step with the
excess), so it is a warning naming both, and not run for cement, which releases heat for weeks
(common practice, no source).

Pure: a :class:`~heatlog.profile.heat.HeatProfile` in, a frozen dataclass or None out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from heatlog.profile.heat import SQRT2, HeatProfile

#: The share of the segment at its end that is checked.
TAIL_FRACTION = 0.25
#: Fewest samples in the tail.
MIN_TAIL = 20


@dataclass(frozen=True)
class TailDrift:
    """Q's drift over the tail, in proportion to the loss integral."""

    start_s: float  # from the segment start
    drift_J: float  # change of Q over the tail explained by β
    beta_W_per_K: float
    u_beta_W_per_K: float
    G_W_per_K: float
    G_levelling_W_per_K: float

    def message(self) -> str:
        return (
            f"Q(t) still moves by {self.drift_J:.3g} J over the last quarter of the log (from "
            f"{self.start_s / 3600.0:.3g} h), in step with ∫(T − T_env)dt: either the release "
            f"goes on (Q is not final) or G is wrong — G = {self.G_levelling_W_per_K:.4g} W/K "
            f"would level Q (used: {self.G_W_per_K:.4g} W/K); check G"
        )

    def to_dict(self) -> dict[str, float]:
        return {
            "tail_start_s": self.start_s,
            "drift_J": self.drift_J,
            "beta_W_per_K": self.beta_W_per_K,
            "u_beta_W_per_K": self.u_beta_W_per_K,
            "G_W_per_K": self.G_W_per_K,
            "G_levelling_Q_W_per_K": self.G_levelling_W_per_K,
        }


def tail_drift(heat: HeatProfile) -> TailDrift | None:
    """The drift of Q over the tail when it is significant (see the module docstring)."""
    t = heat.time_s
    n0 = int(t.size * (1.0 - TAIL_FRACTION))
    if t.size - n0 < MIN_TAIL or n0 >= heat.first_incomplete:
        return None
    q = heat.heat_J[n0:]
    x = heat.loss_integral_Ks[n0:] - heat.loss_integral_Ks[n0]
    if not (np.all(np.isfinite(q)) and abs(x[-1]) > 0):
        return None
    design = np.column_stack([np.ones_like(x), x])
    beta, *_ = np.linalg.lstsq(design, q, rcond=None)
    resid = q - design @ beta
    s2 = float(resid @ resid) / max(q.size - 2, 1)
    cov = s2 * np.linalg.inv(design.T @ design)
    b, u_b = float(beta[1]), math.sqrt(max(float(cov[1, 1]), 0.0))
    drift = b * float(x[-1])
    g = heat.loss.G_W_per_K
    noise_q = 2.0 * SQRT2 * heat.heat_capacity.value * heat.u_reading_K
    if abs(b) > 3.0 * u_b and abs(b) > 0.02 * max(g, 1e-12) and abs(drift) > noise_q:
        return TailDrift(float(t[n0] - t[0]), drift, b, u_b, g, g - b)
    return None
