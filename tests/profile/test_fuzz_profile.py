"""Fuzzed inputs end in a result or one clean error line, never a traceback (hypothesis)."""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from heatlog.errors import HeatlogError
from heatlog.gum import Input
from heatlog.profile import ProfileSettings, analyse_profile, settings_from_table
from heatlog.profile.analysis import _TABLE_KEYS

VALUES = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-5, 5),
    st.booleans(),
    st.text(max_size=5),
    st.lists(st.integers(), max_size=2),
)


@settings(max_examples=150, deadline=None)
@given(st.dictionaries(st.sampled_from(sorted(_TABLE_KEYS) + ["bogus"]), VALUES, max_size=8))
def test_profile_tables_parse_or_fail_cleanly(table):
    try:
        settings_from_table(table, "run.toml")
    except HeatlogError as exc:
        assert "\n" not in str(exc)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    hnp.arrays(float, st.integers(3, 80), elements=st.floats(-1e4, 1e6)),
    st.floats(-30.0, 80.0),
    st.sampled_from(["warmer", "pack", "cement", "generic"]),
    st.booleans(),
)
def test_any_log_gives_a_profile_or_one_clean_error(times, start, kind, fit):
    rng = np.random.default_rng(0)
    temp = start + np.cumsum(rng.normal(0.0, 0.5, times.size))
    s = ProfileSettings(
        heat_capacity=Input(100.0, 1.0),
        loss=None if fit else Input(0.05, 0.001),
        cooling_fit_after_s=float(times.min()) if fit else None,
        env_C=20.0,
        kind=kind,
        sample_g=Input(10.0, 0.01),
    )
    try:
        r = analyse_profile(times, temp, s)
    except HeatlogError as exc:
        assert "\n" not in str(exc)
        return
    d = r.to_dict()
    assert np.isfinite(d["heat_J"]) and np.isfinite(d["u_heat_J"])
