"""Invented long runs with a known heat release (for tests, benchmarks and the simulator).

The box follows C·dT/dt = P(t) − G·(T − T_env(t)); it is integrated with scipy's ``solve_ivp``
(DOP853, relative tolerance 1e-11), so the logged temperatures carry the true cumulative heat
∫P dt to far better than the 1 % the tests ask. Heat-release shapes:

* setting material (cement-like): Q(t) = m·Q∞·exp(−(τ/t)^β), the three-parameter hydration form;
* hand warmer: constant power for a while, then an exponential decay;
* cold pack: an endothermic release that decays exponentially.

Everything here is invented data. Pure and seeded: no I/O.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy.integrate import solve_ivp

Curve = Callable[[np.ndarray], np.ndarray]


@dataclass(frozen=True)
class HydrationCurve:
    """Q(t) = mass·Q∞·exp(−(τ/t)^β) in J, and its rate (W)."""

    q_inf_J_per_g: float = 350.0
    tau_s: float = 15.0 * 3600.0
    beta: float = 1.2
    mass_g: float = 100.0

    def heat(self, t: np.ndarray) -> np.ndarray:
        tt = np.maximum(np.asarray(t, dtype=np.float64), 1e-9)
        return self.mass_g * self.q_inf_J_per_g * np.exp(-((self.tau_s / tt) ** self.beta))

    def power(self, t: np.ndarray) -> np.ndarray:
        tt = np.maximum(np.asarray(t, dtype=np.float64), 1e-9)
        return self.heat(tt) * self.beta * self.tau_s**self.beta * tt ** (-self.beta - 1.0)


@dataclass(frozen=True)
class PlateauDecay:
    """P = P₀ for t < t_on, then P₀·e^(−(t − t_on)/τ); heat in J (negative P₀ for a cold pack).

    ``start_s`` delays the whole release (nothing before it), leaving a quiet baseline."""

    power_W: float = 1.0
    plateau_s: float = 4.0 * 3600.0
    tau_s: float = 2.0 * 3600.0
    start_s: float = 0.0

    def power(self, t: np.ndarray) -> np.ndarray:
        tt = np.asarray(t, dtype=np.float64) - self.start_s
        late = np.exp(-np.maximum(tt - self.plateau_s, 0.0) / self.tau_s)
        return self.power_W * np.where(tt < 0, 0.0, np.where(tt < self.plateau_s, 1.0, late))

    def heat(self, t: np.ndarray) -> np.ndarray:
        tt = np.maximum(np.asarray(t, dtype=np.float64) - self.start_s, 0.0)
        early = np.minimum(tt, self.plateau_s)
        late = np.maximum(tt - self.plateau_s, 0.0)
        return self.power_W * (early + self.tau_s * (1.0 - np.exp(-late / self.tau_s)))


@dataclass(frozen=True, eq=False)
class LongRun:
    """Logged arrays and the truth they were made from."""

    time_s: np.ndarray
    temp_C: np.ndarray
    env_C: np.ndarray
    true_heat_J: np.ndarray
    true_temp_C: np.ndarray
    heat_capacity_J_per_K: float
    loss_W_per_K: float
    probe_tau_s: float = 0.0


def long_run(
    source: HydrationCurve | PlateauDecay,
    *,
    duration_s: float,
    dt_s: float,
    heat_capacity_J_per_K: float,
    loss_W_per_K: float,
    env_C: Callable[[np.ndarray], np.ndarray] | float = 20.0,
    start_C: float | None = None,
    noise_K: float = 0.0,
    resolution_K: float = 0.0,
    seed: int = 0,
    probe_tau_s: float = 0.0,
) -> LongRun:
    """Integrate the box balance and sample it every ``dt_s`` from 0 to ``duration_s``.

    With ``probe_tau_s`` > 0 the logged readings come from a probe that lags the contents with
    that first-order time constant (τ·dT_p/dt = T − T_p, as the simulator's probe), integrated
    with the box; ``true_temp_C`` stays the contents' temperature.

    ``start_C`` defaults to the environment at t = 0. Readings get Gaussian noise (``noise_K``)
    and are rounded to ``resolution_K``; the truth arrays are the exact values.
    """
    if callable(env_C):
        env = env_C
    else:
        level = float(env_C)

        def env(t: np.ndarray) -> np.ndarray:
            return np.full_like(np.asarray(t, dtype=np.float64), level)

    c, g = heat_capacity_J_per_K, loss_W_per_K
    t = np.arange(0.0, duration_s + 0.5 * dt_s, dt_s)
    y0 = float(env(np.zeros(1))[0]) if start_C is None else start_C

    tau = float(probe_tau_s)

    def rhs(time: float, y: np.ndarray) -> np.ndarray:
        tt = np.array([time])
        return (source.power(tt) - g * (y - env(tt))) / c

    # with a lagging probe, the contents are sampled m times finer and the probe follows them
    # exactly for a temperature linear within each fine step
    m = 1 if tau <= 0 else max(1, int(np.ceil(4.0 * dt_s / tau)))
    fine = np.linspace(0.0, t[-1], (t.size - 1) * m + 1)
    sol = solve_ivp(
        rhs,
        (0.0, t[-1]),
        [y0],
        method="DOP853",
        t_eval=fine,
        rtol=1e-11,
        atol=1e-10,
        max_step=max(dt_s, 600.0),
    )
    contents = sol.y[0]
    probe = contents
    if tau > 0:
        h = fine[1] - fine[0]
        decay = float(np.exp(-h / tau))
        probe = np.empty_like(contents)
        probe[0] = contents[0]
        for i in range(contents.size - 1):
            slope_tau = (contents[i + 1] - contents[i]) / h * tau
            probe[i + 1] = (
                contents[i + 1] - slope_tau + (probe[i] - contents[i] + slope_tau) * decay
            )
    true_t = contents[::m]
    rng = np.random.default_rng(seed)
    read = probe[::m] + (rng.normal(0.0, noise_K, t.size) if noise_K > 0 else 0.0)
    if resolution_K > 0:
        read = np.round(read / resolution_K) * resolution_K
    return LongRun(t, read, env(t), source.heat(t), true_t, c, g, tau)


def warmer_run(*, duration_s: float = 12 * 3600.0, dt_s: float = 20.0, **options: float) -> LongRun:
    """The invented hand warmer the tests and examples share: 1.5 W for 5 h, then decaying with
    τ = 2 h, in a 60 J/K pouch losing 0.06 W/K to air at 20 °C (``options`` go to
    :func:`long_run`: noise_K, resolution_K, seed)."""
    return long_run(
        PlateauDecay(1.5, 5 * 3600.0, 2 * 3600.0),
        duration_s=duration_s,
        dt_s=dt_s,
        heat_capacity_J_per_K=60.0,
        loss_W_per_K=0.06,
        env_C=20.0,
        **options,  # type: ignore[arg-type]
    )
