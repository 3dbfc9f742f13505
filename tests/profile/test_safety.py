"""Contact-burn and cold-injury flags."""

import numpy as np
import pytest

from heatlog.profile import burn_exposure, burn_time_h, safety_flags


def _codes(flags):
    return {f.code for f in flags}


def test_burn_time_rule():
    """About 6 h at 44 °C, halving per +1 °C (Moritz & Henriques 1947, from memory)."""
    assert burn_time_h(44.0) == pytest.approx(6.0)
    assert burn_time_h(45.0) == pytest.approx(3.0)
    assert burn_time_h(51.0) == pytest.approx(6.0 / 128.0)
    assert np.isinf(burn_time_h(42.9))


def test_six_hours_at_44_reaches_the_threshold():
    t = np.arange(0.0, 6 * 3600.0 + 1.0, 60.0)
    y = np.full(t.size, 44.0)
    assert burn_exposure(t, y) == pytest.approx(1.0)
    flags = safety_flags(t, y, kind="warmer")
    assert "contact-burn" in _codes(flags)
    assert flags[-1].code == "general"


def test_an_hour_at_43_is_a_caution_and_a_mild_warmer_is_not_flagged():
    t = np.arange(0.0, 2 * 3600.0 + 1.0, 60.0)
    assert "prolonged-contact" in _codes(safety_flags(t, np.full(t.size, 43.2), kind="warmer"))
    assert _codes(safety_flags(t, np.full(t.size, 40.0), kind="warmer")) == {"general"}


def test_hot_peak_is_flagged_with_its_contact_time():
    t = np.arange(0.0, 600.0, 10.0)
    flags = safety_flags(t, np.full(t.size, 50.0), kind="warmer")
    hot = [f for f in flags if f.code == "hot-surface"]
    assert hot and "5.6 min" in hot[0].message  # 6 h / 2⁶


def test_pack_below_freezing_is_a_cold_injury_warning():
    t = np.arange(0.0, 1800.0, 10.0)
    y = np.linspace(5.0, -4.0, t.size)
    flags = safety_flags(t, y, kind="pack")
    cold = [f for f in flags if f.code == "cold-injury"]
    assert cold and cold[0].level == "warning"


def test_cement_gets_material_cautions():
    t = np.arange(0.0, 3600.0, 10.0)
    codes = _codes(safety_flags(t, np.linspace(5.0, -1.0, t.size), kind="cement"))
    assert {"alkaline-material", "early-frost", "general"} <= codes
