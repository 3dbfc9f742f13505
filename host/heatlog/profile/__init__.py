"""Long runs: heat-loss-compensated cumulative heat Q(t) and rate P(t), metrics, maturity.

For hand warmers, cold packs and setting materials (cement, mortar) logged for minutes to days in
an insulated box that leaks heat. Pure computation on arrays; the CLI is ``heatlog profile``.

* :mod:`~heatlog.profile.logcheck` — probe faults, clock resets (segments) and gaps;
* :mod:`~heatlog.profile.heatloss` — the heat-loss coefficient G: given, steady-state or
  heating-curve electrical calibration, cooling-curve fit;
* :mod:`~heatlog.profile.heat` — Q(t), P(t) and their uncertainty (GUM budget and band);
* :mod:`~heatlog.profile.metrics` — peak, threshold and band times;
* :mod:`~heatlog.profile.safety` — contact-burn and cold-injury flags;
* :mod:`~heatlog.profile.maturity` — ASTM C1074 Nurse–Saul factor and equivalent age;
* :mod:`~heatlog.profile.downsample` — extrema-keeping downsampling for plots;
* :mod:`~heatlog.profile.analysis` — :func:`analyse_profile`, the whole chain in one call;
* :mod:`~heatlog.profile.synthetic` — invented runs with a known heat release.
"""

from heatlog.profile.analysis import (
    ProfileResult,
    ProfileSettings,
    analyse_profile,
    analyse_thermogram,
    settings_from_table,
)
from heatlog.profile.downsample import downsample_extrema
from heatlog.profile.heat import HeatProfile, heat_profile, reading_noise
from heatlog.profile.heatloss import (
    CoolingFit,
    HeatingCurveFit,
    HeatLoss,
    cooling_fit,
    given_loss,
    heating_curve_fit,
    loss_from_cooling,
    steady_state_loss,
)
from heatlog.profile.logcheck import Gap, GapPolicy, LogCheck, Reset, Segment, check_log
from heatlog.profile.maturity import Maturity, maturity
from heatlog.profile.metrics import DEFAULT_THRESHOLDS, KINDS, Metrics, Thresholds, metrics
from heatlog.profile.safety import SafetyFlag, burn_exposure, burn_time_h, safety_flags

__all__ = [
    "DEFAULT_THRESHOLDS",
    "KINDS",
    "CoolingFit",
    "Gap",
    "GapPolicy",
    "HeatLoss",
    "HeatProfile",
    "HeatingCurveFit",
    "LogCheck",
    "Maturity",
    "Metrics",
    "ProfileResult",
    "ProfileSettings",
    "Reset",
    "SafetyFlag",
    "Segment",
    "Thresholds",
    "analyse_profile",
    "analyse_thermogram",
    "burn_exposure",
    "burn_time_h",
    "check_log",
    "cooling_fit",
    "downsample_extrema",
    "given_loss",
    "heat_profile",
    "heating_curve_fit",
    "loss_from_cooling",
    "maturity",
    "metrics",
    "reading_noise",
    "safety_flags",
    "settings_from_table",
    "steady_state_loss",
]
