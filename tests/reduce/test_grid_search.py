"""The stacked (whole-grid) forms used by the k searches equal their one-k counterparts, and a
shared grid gives each fit what its own would."""

import numpy as np
import pytest

from heatlog.inputgate import _abs_second_differences
from heatlog.reduce import surroundings
from heatlog.reduce.drift import _design, design_stack
from heatlog.reduce.sampling import block_means
from heatlog.reduce.surroundings import (
    _rss_stack,
    env_response,
    env_responses,
    fit_rooms,
    fit_surroundings,
    ramp_responses,
    ramp_shape,
)
from heatlog.reduce.synthetic import room_run
from heatlog.smoothing import halo_blocks


def _times(rng, n):
    return np.cumsum(rng.uniform(0.5, 2.0, n))


@pytest.mark.parametrize("seed", range(4))
def test_env_responses_rows_are_env_response(seed):
    rng = np.random.default_rng(seed)
    t = _times(rng, 300)
    e = np.cumsum(rng.normal(0, 0.01, t.size))
    # 0, tiny, ordinary and one large enough for the per-sample recursion (k·span ≥ 600)
    ks = np.array([0.0, 1e-16, 1e-4, 3e-3, 0.05, 700.0 / (t[-1] - t[0])])
    rows = env_responses(t, e, ks)
    for k, row in zip(ks, rows, strict=True):
        np.testing.assert_array_equal(row, env_response(t, e, float(k)))


@pytest.mark.parametrize("seed", range(4))
def test_ramp_responses_are_the_recursion_for_a_steady_ramp(seed):
    rng = np.random.default_rng(seed)
    t = 50.0 + _times(rng, 3000)
    span = t[-1] - t[0]
    ks = np.concatenate([[0.0], np.geomspace(1e-3 / span, 20.0 / span, 30)])
    closed = ramp_responses(t, ks)
    rec = env_responses(t, ramp_shape(t), ks)
    assert np.all(closed[0] == 0.0)  # no exchange, no surroundings term
    for row, want in zip(closed[1:], rec[1:], strict=True):
        np.testing.assert_allclose(row, want, rtol=0, atol=1e-9 * np.abs(want).max())


@pytest.mark.parametrize("seed", range(4))
def test_design_stack_layers_are_design(seed):
    rng = np.random.default_rng(seed)
    ft, at = _times(rng, 40), 500.0 + _times(rng, 60)
    ks = np.array([-1e-4, 0.0, 1e-15, 2e-4, 1e-2])
    stack = design_stack(ks, ft, at, float(ft.mean()), float(at.mean()))
    for k, layer in zip(ks, stack, strict=True):
        np.testing.assert_array_equal(
            layer, _design("newtonian", float(k), ft, at, float(ft.mean()), float(at.mean()))
        )


@pytest.mark.parametrize("seed", range(4))
def test_rss_stack_is_lstsq_including_a_zero_column(seed, monkeypatch):
    rng = np.random.default_rng(seed)
    j = rng.normal(size=(5, 80, 4)) * np.array([1.0, 1e3, 1e-3, 10.0])
    j[2, :, 3] = 0.0  # a rank-deficient layer, as the ramp column is at k = 0
    # nearly collinear columns: the normal equations too badly conditioned, the SVD takes them
    j[4, :, 3] = 2.0 * j[4, :, 0] + 1e-9 * rng.normal(size=80)
    z = rng.normal(size=(5, 80))
    by_svd = []
    real_svd = surroundings._rss_svd
    monkeypatch.setattr(
        surroundings, "_rss_svd", lambda jj, zz: by_svd.append(jj.shape[0]) or real_svd(jj, zz)
    )
    got = _rss_stack(j, z)
    assert by_svd  # the collinear layer did go through the SVD
    for i in range(5):
        p, *_ = np.linalg.lstsq(j[i], z[i], rcond=None)
        r = z[i] - j[i] @ p
        # condition number ~1e10: both fits round at ~1e-8 of the sum there
        assert got[i] == pytest.approx(float(r @ r), rel=1e-6 if i == 4 else 1e-9)


@pytest.mark.parametrize("n", [1, 6, 7, 8, 1000, (1 << 14) + 5, 3 * (1 << 14)])
def test_halo_blocks_are_the_edge_padded_series_in_pieces(n):
    y = np.random.default_rng(n).normal(size=n)
    for half in (0, 3):
        padded = np.pad(y, half, mode="edge")
        starts = []
        for start, seg in halo_blocks(y, half):
            m = seg.size - 2 * half
            np.testing.assert_array_equal(seg, padded[start : start + m + 2 * half])
            starts.append((start, m))
        assert starts[0][0] == 0 and sum(m for _, m in starts) == n
        assert all(a + m == b for (a, m), (b, _) in zip(starts, starts[1:], strict=False))


@pytest.mark.parametrize("n", [3, 4, 100, (1 << 16) + 1, (1 << 17) + 7])
def test_second_differences_block_by_block(n):
    v = np.random.default_rng(n).normal(size=n) * 100.0
    want = np.abs(np.diff(v, 2))
    np.testing.assert_array_equal(np.concatenate(list(_abs_second_differences(v))), want)
    out = np.empty(n - 2)
    for _ in _abs_second_differences(v, out):
        pass
    np.testing.assert_array_equal(out, want)


@pytest.mark.parametrize("seed", range(3))
def test_room_fits_together_equal_each_alone(seed):
    # fit_rooms shares the k grid between the drifting- and the steady-room fit; each result
    # must be the one its own fit gives, to the last bit
    th = room_run(seed, log_env=False).thermogram
    t, y, _ = block_means(th.time_s, th.temp_C, 4000)
    fore = t <= t[0] + 0.2 * (t[-1] - t[0])
    after = t >= t[0] + 0.6 * (t[-1] - t[0])
    ramp, steady = fit_rooms(t, y, fore, after)
    for together, alone in (
        (ramp, fit_surroundings(t, y, fore, after, None, ramp=True)),
        (steady, fit_surroundings(t, y, fore, after, None, ramp=False)),
    ):
        assert together.kind == alone.kind
        assert (together.k_per_s, together.rss, together.n) == (alone.k_per_s, alone.rss, alone.n)
        assert (together.beta_K_per_s, together.u_beta_K_per_s) == (
            alone.beta_K_per_s,
            alone.u_beta_K_per_s,
        )
        np.testing.assert_array_equal(together.w, alone.w)
