"""Acceptance sweep and coverage of the k = 2 interval over seeded synthetic runs (invented data).

Runs are drawn by ``random_run`` over the specified ranges: exchange constant 2e-5…1e-3 1/s,
release time constant 3…150 s, ΔT ±1…14 K, noise ≤ 0.03 K, probe lag ≤ 8 s, sampling 0.5…5 s,
fore-period 5…10 min, after-period long enough for the release and lag to die out. Everything is
auto-detected. The truth is the generator's adiabatic change (checked against scipy's ODE solver in
test_synthetic.py). Coverage criterion: JCGM 100:2008 6.2 (k = 2, about 95 %); we require ≥ 90 %
and that the interval is not inflated (mean U within 10× the RMS error) — common practice, no source.
"""

import numpy as np
import pytest
from heatlog.reduce import reduce_thermogram
from heatlog.reduce.synthetic import random_run


def _sweep(seeds):
    errors, rel, expanded = [], [], []
    for seed in seeds:
        run = random_run(seed)
        truth = run.truth.delta_t_K[0]
        red = reduce_thermogram(run.thermogram)
        errors.append(red.delta_t_K - truth)
        rel.append(abs(red.delta_t_K - truth) / abs(truth))
        expanded.append(red.U_delta_t_K)
    return np.array(errors), np.array(rel), np.array(expanded)


@pytest.mark.slow
def test_acceptance_sweep_relative_error():
    _, rel, _ = _sweep(range(120))
    assert np.median(rel) <= 0.001
    assert np.percentile(rel, 95) <= 0.005


@pytest.mark.slow
def test_k2_interval_covers_the_truth_and_is_not_inflated():
    errors, _, expanded = _sweep(range(5000, 5120))
    coverage = np.mean(np.abs(errors) <= expanded)
    assert coverage >= 0.90
    rms = np.sqrt(np.mean(errors**2))
    assert np.mean(expanded) <= 10 * rms
    assert np.median(expanded / np.abs(errors)) < 20
