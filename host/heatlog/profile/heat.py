"""Cumulative heat Q(t) and heat-release rate P(t) of a long run in a leaky box, with uncertainty.

The semi-adiabatic method family (EN 196-9, RILEM TC 119, NT BUILD 388) balances the heat a
sample releases against what warms the box and what leaks out:

    Q(t) = C·(T(t) − T(0)) + G·∫₀ᵗ (T − T_env) dt,        P(t) = dQ/dt = C·dT/dt + G·(T − T_env)

with C the heat capacity of everything that warms (box, contents *and* the sample itself) and G
the heat-loss coefficient (:mod:`heatlog.profile.heatloss`). The integral is a cumulative
trapezoid sum (vectorised; a million samples take milliseconds). P(t) is the slope of Q over a
centred window (``rate_window_s``), because differentiating 1-s readings sample by sample only
amplifies noise.

Uncertainty (GUM, JCGM 100:2008, inputs uncorrelated): at every sample the standard
uncertainty of Q combines

* u(C)·(T − T(0)), or with G from a cooling fit (G = k·C) u(C)·(T − T(0) + k·I) and u(k)·C·I;
* u(G)·I with I = ∫(T − T_env)dt — it grows with the integral;
* u(T_env)·G·t — an offset of the environment reading relative to the sample probe leaks into the
  integral at every second, so it grows with elapsed time;
* the readings: C·√2·u_r for T(0) and T(t), and G·u_r·√(Σ Δt²) in the integral, where u_r
  combines the noise (from second differences) and the reading step (q/√12);
* the integration rule: the trapezoid sum against the same sum on every other sample
  (Richardson, |I_h − I_2h|/3), taken as a rectangular half-width;
* the probe's time constant τ, when its lag was corrected: u(τ)·(C·(s(t) − s(0)) + G·(T_p(t) −
  T_p(0))) with s the smoothed slope, and what the smoothing may flatten, C·τ·|s_w − s_2w|/3 as a
  rectangular half-width (:mod:`heatlog.profile.lag`);
* gaps bridged on request: half the interpolated contribution as a rectangular half-width
  (common practice, no source).

:meth:`HeatProfile.budget` gives the full :class:`heatlog.gum.Budget` at any sample.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from heatlog.errors import InputError
from heatlog.gum import SQRT3, Budget, Component, Input, quantisation
from heatlog.profile.heatloss import HeatLoss
from heatlog.profile.lag import LagCorrection
from heatlog.profile.logcheck import GapPolicy, Segment
from heatlog.profile.noise import reading_noise

SQRT2 = math.sqrt(2.0)


def _richardson_error(
    excess: np.ndarray, t: np.ndarray, keep: np.ndarray, fine_cum: np.ndarray
) -> np.ndarray:
    """|I_h − I_2h|/3 per sample: trapezoid on all samples against every other sample."""
    n = t.size
    te, xe = t[::2], excess[::2]
    # A coarse step is skipped when either fine interval inside it is skipped.
    k_pad = np.append(keep, True)
    keep_c = k_pad[0 : 2 * (te.size - 1) : 2] & k_pad[1 : 2 * (te.size - 1) : 2]
    inc = 0.5 * (xe[1:] + xe[:-1]) * np.diff(te) * keep_c
    coarse = np.concatenate(([0.0], np.cumsum(inc)))
    err_even = np.abs(fine_cum[::2] - coarse) / 3.0
    return np.repeat(err_even, 2)[:n]


@dataclass(frozen=True, eq=False)
class HeatProfile:
    """Q(t) and P(t) on one log segment, with what the uncertainty needs at every sample."""

    time_s: np.ndarray
    temp_C: np.ndarray
    env_C: np.ndarray
    heat_capacity: Input
    loss: HeatLoss
    u_env_K: float
    u_reading_K: float
    noise_K: float
    resolution_K: float
    rate_window_s: float
    gap_policy: GapPolicy
    rise_K: np.ndarray  # T − T(0)
    loss_integral_Ks: np.ndarray  # ∫(T − T_env)dt, excluded gaps skipped
    elapsed_s: np.ndarray  # time integrated over (excluded gaps skipped)
    sum_dt2_s2: np.ndarray  # Σ Δt² up to each sample (noise in the integral)
    integration_err_Ks: np.ndarray  # Richardson estimate of the trapezoid error
    bridged_Ks: np.ndarray  # cumulative ∫ across bridged gaps (policy "interpolate")
    skipped_Ks: np.ndarray  # cumulative ∫ across excluded gaps, by interpolation (not in Q)
    first_incomplete: int  # first sample after an excluded gap (size if none)
    lag: LagCorrection | None = None  # the probe-lag correction applied to temp_C, if any

    @cached_property
    def heat_J(self) -> np.ndarray:
        """Q(t) in J (positive: released by the sample)."""
        return self.heat_capacity.value * self.rise_K + self.loss.G_W_per_K * self.loss_integral_Ks

    def _contributions(self, idx: slice | int) -> list[tuple[Component, np.ndarray]]:
        c, g = self.heat_capacity, self.loss
        rise, integ = self.rise_K[idx], self.loss_integral_Ks[idx]
        rows: list[tuple[Component, np.ndarray]] = []
        if g.rate_per_s is not None and g.u_rate_per_s is not None:
            k = g.rate_per_s
            rows.append(
                (
                    Component("C (heat capacity)", c.value, c.u, 0.0, "J/K", note="G = k·C"),
                    rise + k * integ,
                )
            )
            rows.append(
                (Component("k = G/C (cooling fit)", k, g.u_rate_per_s, 0.0, "1/s"), c.value * integ)
            )
        else:
            rows.append(
                (Component("C (heat capacity)", c.value, c.u, 0.0, "J/K", note=c.note), rise)
            )
            rows.append(
                (
                    Component(
                        "G (heat-loss coefficient)",
                        g.G_W_per_K,
                        g.u_G_W_per_K,
                        0.0,
                        "W/K",
                        note=g.source,
                    ),
                    integ,
                )
            )
        rows.append(
            (
                Component(
                    "T_env offset vs sample probe",
                    0.0,
                    self.u_env_K,
                    0.0,
                    "K",
                    note="grows with elapsed time",
                ),
                -g.G_W_per_K * self.elapsed_s[idx],
            )
        )
        rows.append(
            (
                Component(
                    "readings T(0), T(t)",
                    0.0,
                    SQRT2 * self.u_reading_K,
                    0.0,
                    "K",
                    note=f"noise {self.noise_K:.2g} K, step {self.resolution_K:g} K",
                ),
                np.full_like(rise, c.value, dtype=float),
            )
        )
        rows.append(
            (
                Component("reading noise in ∫(T − T_env)dt", 0.0, self.u_reading_K, 0.0, "K"),
                g.G_W_per_K * np.sqrt(self.sum_dt2_s2[idx]),
            )
        )
        rows.append(
            (
                Component(
                    "integration rule (trapezoid)",
                    0.0,
                    1.0 / SQRT3,
                    0.0,
                    "",
                    note="|I_h − I_2h|/3 as half-width",
                ),
                g.G_W_per_K * self.integration_err_Ks[idx],
            )
        )
        if self.lag is not None:
            lag = self.lag
            slope, meas = lag.slope_K_per_s[idx], lag.measured_C[idx]
            rows.append(
                (
                    Component(
                        "probe time constant τ",
                        lag.tau.value,
                        lag.tau.u,
                        0.0,
                        "s",
                        note=f"lag corrected, T = T_probe + τ·dT/dt; {lag.tau.note}".rstrip("; "),
                    ),
                    c.value * (slope - lag.slope_K_per_s[0])
                    + g.G_W_per_K * (meas - lag.measured_C[0]),
                )
            )
            if lag.smoothing_K is not None:
                rows.append(
                    (
                        Component(
                            "probe-lag slope smoothing",
                            0.0,
                            1.0 / SQRT3,
                            0.0,
                            "",
                            note="τ·|s_w − s_2w|/3 as half-width",
                        ),
                        c.value * np.abs(lag.smoothing_K[idx] - lag.smoothing_K[0]),
                    )
                )
        if self.gap_policy is GapPolicy.INTERPOLATE:
            rows.append(
                (
                    Component(
                        "bridged gaps",
                        0.0,
                        0.5 / SQRT3,
                        0.0,
                        "",
                        note="half the interpolated loss as half-width, common practice, no source",
                    ),
                    g.G_W_per_K * np.abs(self.bridged_Ks[idx]),
                )
            )
        return rows

    @cached_property
    def u_heat_J(self) -> np.ndarray:
        """Standard uncertainty of Q(t) at every sample (J)."""
        var = np.zeros_like(self.heat_J)
        for comp, sens in self._contributions(slice(None)):
            var += (np.asarray(sens) * comp.u) ** 2
        return np.sqrt(var)

    def budget(self, index: int = -1, *, sample_g: Input | None = None) -> Budget:
        """The GUM budget of Q (J), or of Q/m (J/g) with the sample mass, at one sample."""
        i = int(index) % self.time_s.size
        comps = [
            Component(
                c.name, c.value, c.u, float(np.asarray(s)), c.unit, c.dof, c.evaluation, c.note
            )
            for c, s in self._contributions(i)
        ]
        q = float(self.heat_J[i])
        at = f"at {self.time_s[i] - self.time_s[0]:.0f} s"
        if sample_g is None:
            return Budget(f"Q {at}", q, "J", tuple(comps))
        m = sample_g.value
        scaled = [
            Component(c.name, c.value, c.u, c.sensitivity / m, c.unit, c.dof, c.evaluation, c.note)
            for c in comps
        ]
        scaled.append(Component("sample mass", m, sample_g.u, -q / m**2, "g", note=sample_g.note))
        return Budget(f"Q/m {at}", q / m, "J/g", tuple(scaled))

    @cached_property
    def rate_W(self) -> np.ndarray:
        """P(t) in W: slope of Q over a centred window; NaN where the window meets a skipped gap."""
        t, q = self.time_s, self.heat_J
        half = 0.5 * self.rate_window_s
        lo = np.maximum(t - half, t[0])
        hi = np.minimum(t + half, t[-1])
        rate = (np.interp(hi, t, q) - np.interp(lo, t, q)) / (hi - lo)
        if self.first_incomplete < t.size:
            skipped = np.flatnonzero(np.diff(self.skipped_Ks) != 0)
            for i in skipped:
                rate[(hi > t[i]) & (lo < t[i + 1])] = np.nan
        return rate

    def u_rate_at(self, index: np.ndarray | int) -> np.ndarray:
        """Standard uncertainty of P (W) at the given samples, from u(C), u(G), u(T_env), noise."""
        idx = np.atleast_1d(np.asarray(index))
        t, y, env = self.time_s, self.temp_C, self.env_C
        ti = t[idx]
        half = 0.5 * self.rate_window_s
        lo = np.maximum(ti - half, t[0])
        hi = np.minimum(ti + half, t[-1])
        slope = (np.interp(hi, t, y) - np.interp(lo, t, y)) / (hi - lo)
        c, g = self.heat_capacity, self.loss
        var = (slope * c.u) ** 2 + ((y[idx] - env[idx]) * g.u_G_W_per_K) ** 2
        var += (g.G_W_per_K * self.u_env_K) ** 2
        var += (c.value * SQRT2 * self.u_reading_K / (hi - lo)) ** 2
        if self.lag is not None:
            # ∂P/∂τ = C·d²T/dt²: the window's change of the smoothed slope
            s = self.lag.slope_K_per_s
            curv = (np.interp(hi, t, s) - np.interp(lo, t, s)) / (hi - lo)
            var += (c.value * self.lag.tau.u * curv) ** 2
        return np.sqrt(var)

    @cached_property
    def u_rate_W(self) -> np.ndarray:
        """Standard uncertainty of P(t) at every sample (W)."""
        return self.u_rate_at(np.arange(self.time_s.size))

    def to_dict(self) -> dict[str, object]:
        end = -1
        skipped = float(self.skipped_Ks[-1]) * self.loss.G_W_per_K
        return {
            "heat_J": float(self.heat_J[end]),
            "u_heat_J": float(self.u_heat_J[end]),
            "rate_window_s": self.rate_window_s,
            "reading_noise_K": self.noise_K,
            "reading_u_K": self.u_reading_K,
            "gap_policy": self.gap_policy.value,
            "heat_lost_in_skipped_gaps_J_estimate": skipped,
            "complete": self.first_incomplete >= self.time_s.size,
            "heat_capacity_J_per_K": self.heat_capacity.value,
            "u_heat_capacity_J_per_K": self.heat_capacity.u,
            "loss": self.loss.to_dict(),
            "u_env_K": self.u_env_K,
        }


def heat_profile(
    segment: Segment,
    heat_capacity: Input,
    loss: HeatLoss,
    *,
    u_env_K: float,
    resolution_K: float = 0.0,
    rate_window_s: float | None = None,
    gap_policy: GapPolicy = GapPolicy.EXCLUDE,
    lag: LagCorrection | None = None,
) -> HeatProfile:
    """Q(t), P(t) and their uncertainty on one segment from :func:`~heatlog.profile.logcheck.check_log`.

    ``rate_window_s`` defaults to the larger of 10 median steps and 1/200 of the segment
    (common practice, no source). ``lag``, when the segment's temperatures were corrected for
    the probe's time constant (:func:`heatlog.profile.lag.correct_lag`), puts u(τ) in the budget.
    """
    if not (math.isfinite(heat_capacity.value) and heat_capacity.value > 0):
        raise InputError(
            f"the heat capacity must be a positive number of J/K, got {heat_capacity.value:g}"
        )
    if not (u_env_K >= 0 and resolution_K >= 0):
        raise InputError("uncertainties and the reading step must be zero or positive")
    t, y, env = segment.time_s, segment.temp_C, segment.env_C
    if rate_window_s is None:
        rate_window_s = max(10.0 * segment.median_step_s, segment.duration_s / 200.0)
    if not rate_window_s > 0:
        raise InputError(f"the rate window must be positive, got {rate_window_s:g} s")
    dt = np.diff(t)
    skip = segment.excluded(gap_policy)
    keep = ~skip
    excess = y - env
    inc = 0.5 * (excess[1:] + excess[:-1]) * dt
    zero = np.zeros(1)
    fine = np.concatenate((zero, np.cumsum(np.where(keep, inc, 0.0))))
    gap_mask = np.zeros_like(skip)
    gap_mask[[g.index for g in segment.gaps]] = True
    bridged = np.concatenate((zero, np.cumsum(np.where(gap_mask & keep, inc, 0.0))))
    skipped = np.concatenate((zero, np.cumsum(np.where(skip, inc, 0.0))))
    first_incomplete = int(np.argmax(skip)) + 1 if skip.any() else t.size
    noise = reading_noise(y)
    u_read = math.hypot(noise, quantisation(resolution_K))
    return HeatProfile(
        time_s=t,
        temp_C=y,
        env_C=env,
        heat_capacity=heat_capacity,
        loss=loss,
        u_env_K=u_env_K,
        u_reading_K=u_read,
        noise_K=noise,
        resolution_K=resolution_K,
        rate_window_s=float(rate_window_s),
        gap_policy=gap_policy,
        rise_K=y - y[0],
        loss_integral_Ks=fine,
        elapsed_s=np.concatenate((zero, np.cumsum(np.where(keep, dt, 0.0)))),
        sum_dt2_s2=np.concatenate((zero, np.cumsum(np.where(keep, dt * dt, 0.0)))),
        integration_err_Ks=_richardson_error(excess, t, keep, fine),
        bridged_Ks=bridged,
        skipped_Ks=skipped,
        first_incomplete=first_incomplete,
        lag=lag,
    )
