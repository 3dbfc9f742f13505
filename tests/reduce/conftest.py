"""Runs shared by the reduction tests (invented data)."""

import pytest

from heatlog.reduce.synthetic import Release, synthetic_run


@pytest.fixture(scope="session")
def heater_then_reaction():
    """An electrical calibration (heater, +3 K) and later an endothermic reaction (−4 K)."""
    return synthetic_run(
        releases=(Release(400.0, 3.0, 60.0, "heater"), Release(1800.0, -4.0, 20.0)),
        duration_s=3300.0,
        dt_s=1.0,
        k_per_s=3e-4,
        probe_lag_s=3.0,
        noise_K=0.01,
        seed=2,
    )
