"""The uncertainty budget of a corrected temperature change (GUM, JCGM 100:2008).

Components, all in kelvin with sensitivity 1 (each is already the effect on the result):

* fore-period drift fit and after-period drift fit: the readings of each period propagated through
  the drift fit into the result (sandwich form, see ``drift``), Type A;
* reading noise in the main period: the noise of the readings between t₀ and tₙ enters
  Regnault–Pfaundler through k·∫T dt, so u = |k|·σ·√Σwᵢ² (trapezoid weights wᵢ), Type A;
* resolution: an end temperature whose period shows fewer than 3 distinct readings is known only to
  a quantisation step q, u = q/√12 per such end (JCGM 100 F.2.2.1), Type B. Where noise larger
  than q dithers the readings, or the drift carries them across several steps, the rounding error
  shows in the fit residuals and so is already in the drift-fit components;
* period boundaries: largest change of the result when the main-period start is moved earlier and
  the after-period start later (see ``reduce_thermogram``), as a rectangular half-width (a/√3);
* method spread: largest difference between the chosen result and the other exact methods that
  apply (rectangular a/√3);
* release still under way when the after-period starts (``Event.tail_K``, rectangular a/√3),
  and, with a moving surroundings temperature (``surroundings``): the exchange constant in the
  T_env term, the surroundings probe's noise and lag, or the fitted room drift, or the spread
  against a drifting room when the data contradict a steady one.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from heatlog.gum import SQRT3, Budget, Component, quantisation


def resolution_u(step_K: float, noise_K: float, distinct_levels: Sequence[int]) -> float:
    """q/√12 for each end whose period holds fewer than 3 distinct readings (see module doc)."""
    if step_K <= 0 or noise_K > step_K:
        return 0.0
    flat_ends = sum(1 for n in distinct_levels if n < 3)
    return math.sqrt(flat_ends) * quantisation(step_K)


def delta_t_budget(
    *,
    value: float,
    u_fore: float,
    u_after: float,
    dof_fore: float,
    dof_after: float,
    u_noise: float,
    u_resolution: float,
    boundary_spread: float,
    method_spread: float,
    method: str,
    extra: Sequence[Component] = (),
    more: Sequence[Component] = (),
) -> Budget:
    """The ΔT budget. ``extra`` replaces the drift rows (a whole-curve fit); ``more`` adds rows
    (surroundings model, unfinished release) to any method."""

    def row(name: str, u: float, dof: float, evaluation: str, note: str) -> Component:
        return Component(name, 0.0, u, 1.0, "K", dof, evaluation, note)

    drift_rows = [
        row(
            "fore-period drift fit",
            u_fore,
            dof_fore,
            "A",
            "fore-period readings through the drift fit",
        ),
        row(
            "after-period drift fit",
            u_after,
            dof_after,
            "A",
            "after-period readings through the drift fit",
        ),
        row(
            "main-period reading noise", u_noise, math.inf, "A", "k·σ·√Σw² of the exchange integral"
        ),
    ]
    if extra:  # a whole-curve fit already holds the drift periods and the main-period noise
        drift_rows = []
    comps = [
        *drift_rows,
        row("resolution", u_resolution, math.inf, "B", "q/√12 per flat end (JCGM 100 F.2.2.1)"),
        row(
            "period boundaries",
            boundary_spread / SQRT3,
            math.inf,
            "B",
            "largest change with moved boundaries, rectangular",
        ),
        row(
            "method spread",
            method_spread / SQRT3,
            math.inf,
            "B",
            "largest difference to other applicable methods, rectangular",
        ),
        *extra,
        *more,
    ]
    return Budget(f"corrected temperature change ({method})", value, "K", tuple(comps))
