"""How long a fore- or after-period must be: one rule for the reduction and the guided live run.

Stated minimum (common practice, no source): a drift period needs at least ``MIN_PERIOD_POINTS``
readings (enough to fit a drift line and see its residual noise) spanning at least
``MIN_PERIOD_S`` seconds. Below that the run is refused. Between the minimum and
``FULL_PERIOD_S`` the run is reduced; its drift-fit rows come from the period's own readings
(fewer readings and a shorter lever arm give a larger u), and the boundary row moves the
boundaries only as far as the period allows (see ``boundary_shift``).

:func:`period_shortfall` is the one check; :func:`heatlog.report.guide.LiveGuide` uses the same
function, so its "enough baseline" signal agrees with what ``reduce_thermogram`` accepts.
"""

from __future__ import annotations

import numpy as np

MIN_PERIOD_S = 30.0
MIN_PERIOD_POINTS = 12
#: A period this long is "long" (the old fixed requirement); shorter ones get a note.
FULL_PERIOD_S = 120.0


def period_shortfall(t: np.ndarray, lo: float, hi: float, what: str) -> str | None:
    """None when the readings in [lo, hi] make a usable drift period, else why not (one clause).

    The message names the period, its span and reading count, and the stated minimum; it never
    quotes an empty or reversed span.
    """
    n = int(np.count_nonzero((t >= lo) & (t <= hi)))
    length = hi - lo
    if length >= MIN_PERIOD_S and n >= MIN_PERIOD_POINTS:
        return None
    if length <= 0:
        edge = "start" if what.startswith("fore") else "end"
        return (
            f"there is no {what}: the event reaches the {edge} of the log (a {what} needs at "
            f"least {MIN_PERIOD_S:.0f} s and {MIN_PERIOD_POINTS} readings)"
        )
    return (
        f"the {what} ({lo:.0f} s to {hi:.0f} s) lasts {length:.0f} s with {n} readings; it needs "
        f"at least {MIN_PERIOD_S:.0f} s and {MIN_PERIOD_POINTS} readings"
    )


def min_period_s(step_s: float) -> float:
    """The shortest usable period at a sampling step ``step_s``: both minimums met."""
    return max(MIN_PERIOD_S, (MIN_PERIOD_POINTS - 1) * max(step_s, 0.0))


def detector_window_s(step_s: float) -> float:
    """The event detector's smoothing window W at a sampling step (``events``, step 1)."""
    return max(60.0, 9.0 * max(step_s, 0.0))


def baseline_needed_s(step_s: float) -> float:
    """Readings before an event that always leave a usable fore-period.

    The detector's event start lies at most 1.5·W + 2h before the onset it detects (``events``
    step 4: walk back by at most W on the smoothed rate, then W/2 + 2h); what is left must meet
    the stated minimum. Most runs need less (the start is refined on the
    readings), so a run may be reduced with less baseline than this. Never below
    ``FULL_PERIOD_S``: the detector needs that much quiet drift before an event to tell the two
    apart reliably.
    """
    h = max(step_s, 0.0)
    return max(FULL_PERIOD_S, min_period_s(h) + 1.5 * detector_window_s(h) + 2.0 * h)
