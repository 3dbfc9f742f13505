"""Bad long logs: gaps, probe faults and clock resets are reported, never integrated silently."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from heatlog.errors import InputError
from heatlog.gum import Input
from heatlog.profile import GapPolicy, ProfileSettings, analyse_profile, check_log


def _log(n=600, dt=10.0):
    t = np.arange(n) * dt
    return t, 20.0 + 5.0 * np.exp(-t / 3000.0)


def test_gap_is_found_with_start_and_length():
    t, y = _log()
    t2 = np.where(t >= 2000.0, t + 900.0, t)  # 900 s hole after 1990 s
    check = check_log(t2, y, 20.0)
    (seg,) = check.segments
    (gap,) = seg.gaps
    assert gap.start_s == pytest.approx(1990.0)
    assert gap.length_s == pytest.approx(910.0)
    assert seg.excluded(GapPolicy.EXCLUDE).sum() == 1
    assert seg.excluded(GapPolicy.INTERPOLATE).sum() == 0
    # A step just under the gap factor is not a gap.
    t3 = np.where(t >= 2000.0, t + 39.0, t)
    assert check_log(t3, y, 20.0).segments[0].gaps == ()


def test_probe_faults_are_excluded_and_counted():
    t, y = _log()
    flags = np.zeros(t.size)
    y = y.copy()
    y[50:53] = -273.0  # what a broken thermistor wire reads
    flags[50:53] = 4
    check = check_log(t, y, 20.0, flags=flags)
    assert check.faulted == 3
    seg = check.segments[0]
    assert seg.temp_C.min() > 19.0
    assert 51 not in seg.rows  # data rows are 1-based: rows 51..53 dropped
    assert seg.gaps == ()  # a 40 s hole at 10 s steps stays under 5 median steps


def test_clock_reset_splits_into_segments():
    t, y = _log()
    t2 = t.copy()
    t2[300:] = t[300:] - t[300] + 5.0  # the board rebooted and counts from 5 s again
    check = check_log(t2, y, 20.0)
    assert len(check.segments) == 2
    (reset,) = check.resets
    assert reset.row == 301
    assert reset.time_before_s == pytest.approx(2990.0)
    assert reset.time_after_s == pytest.approx(5.0)
    assert check.segments[1].rows[0] == 301
    settings_ = ProfileSettings(heat_capacity=Input(100.0, 1.0), loss=Input(0.05, 0.0), env_C=20.0)
    r = analyse_profile(t2, y, settings_)
    assert r.heat.time_s.size == 300
    assert any("clock reset at data row 301" in n for n in r.notes)
    r1 = analyse_profile(t2, y, ProfileSettings(**{**settings_.__dict__, "segment": 1}))
    assert r1.heat.time_s[0] == pytest.approx(5.0)
    with pytest.raises(InputError, match="segment 2 does not exist"):
        analyse_profile(t2, y, ProfileSettings(**{**settings_.__dict__, "segment": 2}))


def test_repeated_time_is_a_break_too():
    t, y = _log(20)
    t[10] = t[9]
    check = check_log(t, y, 20.0)
    assert len(check.resets) == 1 and len(check.segments) == 2
    # Two resets one sample apart leave a 1-sample stretch: dropped and counted.
    t[15] = t[14] - 1.0
    t[16:] = t[16:] - 100.0
    check = check_log(t, y, 20.0)
    assert check.dropped == 1 and len(check.resets) == 3 and len(check.segments) == 3


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        (dict(flags=np.ones(600)), "need at least 3 good samples"),
        (dict(gap_factor=1.0), "gap factor must be above 1"),
        (dict(env_C=np.zeros(5)), "environment channel has 5 values"),
    ],
    ids=["all-faulted", "gap-factor", "env-length"],
)
def test_bad_inputs_end_in_one_line(kwargs, fragment):
    t, y = _log()
    env = kwargs.pop("env_C", 20.0)
    with pytest.raises(InputError, match=fragment) as err:
        check_log(t, y, env, **kwargs)
    assert "\n" not in str(err.value)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=3, max_size=60))
def test_any_time_column_is_split_or_refused_cleanly(times):
    """Fuzzed time columns (any order) end in ordered segments or one InputError."""
    t = np.asarray(times)
    try:
        check = check_log(t, np.full(t.size, 20.0), 20.0)
    except InputError as exc:
        assert "\n" not in str(exc)
        return
    for seg in check.segments:
        assert np.all(np.diff(seg.time_s) > 0)
    assert sum(s.time_s.size for s in check.segments) <= t.size
