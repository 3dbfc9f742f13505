"""The board's on-board °C conversions agree with the host's probe models.

The board shows temperatures live with plain-float conversions (firmware/heatlog_fw/conversions.py);
the host re-derives every temperature from the raw counts with heatlog.probes. Both are checked on
the shared vectors file and then against each other over each model's working range, so a
reading shown live and the one in the report cannot drift apart.
"""

import json

import numpy as np
import pytest
from conftest import VECTORS
from heatlog_fw import conversions as fw

from heatlog.probes import Beta, CallendarVanDusen, MAX31865Chain, SteinhartHart, VoltageDivider

VEC = json.loads((VECTORS / "conversions.json").read_text(encoding="utf-8"))


def test_host_models_meet_the_shared_vectors():
    cvd = VEC["callendar_van_dusen"]
    pt = CallendarVanDusen(cvd["R0_ohm"], cvd["A"], cvd["B"], cvd["C"])
    for case in cvd["cases"]:  # IEC 60751 values, sources in the file
        assert pt.temperature_to_resistance(case["t_C"]) == pytest.approx(
            case["R_ohm"], abs=case["tol_ohm"]
        )
        assert pt.resistance_to_temperature(case["R_ohm"]) == pytest.approx(
            case["t_C"], abs=case["tol_C"]
        )
    sh = VEC["steinhart_hart"]
    ntc = SteinhartHart(sh["A"], sh["B"], sh["C"])
    for case in sh["cases"]:  # common practice, from memory (as marked in the file)
        assert ntc.resistance_to_temperature(case["R_ohm"]) == pytest.approx(
            case["t_C"], abs=case["tol_C"]
        )
    b = VEC["beta"]
    beta = Beta(b["R25_ohm"], b["beta_K"])
    for case in b["cases"]:
        assert beta.resistance_to_temperature(case["R_ohm"]) == pytest.approx(
            case["t_C"], abs=case["tol_C"]
        )
    m = VEC["max31865"]
    chain = MAX31865Chain(m["R_ref_ohm"])
    for case in m["cases"]:  # MAX31865 datasheet relation
        t = pt.resistance_to_temperature(chain.to_resistance(case["code"]))
        assert t == pytest.approx(case["t_C"], abs=case["tol_C"])
    d = VEC["adc_divider"]
    for case in d["cases"]:
        if case["R_ohm"] is None:
            continue
        bits = int(np.log2(case["full_scale"]))
        div = VoltageDivider(d["R_fixed_ohm"], "low", bits=bits)
        assert div.to_resistance(case["raw"]) == pytest.approx(case["R_ohm"], abs=case["tol_ohm"])


def test_board_and_host_agree_across_the_working_range():
    cvd = VEC["callendar_van_dusen"]
    pt = CallendarVanDusen(cvd["R0_ohm"], cvd["A"], cvd["B"], cvd["C"])
    for t in np.linspace(-190.0, 800.0, 199):
        r = float(pt.temperature_to_resistance(t))
        assert fw.cvd_ohms(t, cvd["R0_ohm"]) == pytest.approx(r, abs=1e-6)
        assert fw.cvd_c(r, cvd["R0_ohm"]) == pytest.approx(t, abs=1e-4)
    sh = VEC["steinhart_hart"]
    ntc = SteinhartHart(sh["A"], sh["B"], sh["C"])
    b = VEC["beta"]
    beta = Beta(b["R25_ohm"], b["beta_K"])
    for t in np.linspace(-30.0, 120.0, 151):
        r = float(ntc.temperature_to_resistance(t))
        assert fw.steinhart_hart_c(r, sh["A"], sh["B"], sh["C"]) == pytest.approx(t, abs=1e-6)
        rb = float(beta.temperature_to_resistance(t))
        assert fw.beta_c(rb, b["R25_ohm"], b["beta_K"]) == pytest.approx(t, abs=1e-6)
    div = VoltageDivider(10_000.0, "low", bits=12, oversample=16)
    for raw in range(50, 16 * 4096 - 50, 997):
        assert fw.divider_ohms(raw, 16 * 4096, 10_000.0) == pytest.approx(
            div.to_resistance(raw), rel=1e-9
        )
    rtd = MAX31865Chain(430.0)
    for code in range(5000, 20000, 611):
        assert fw.rtd_ohms(code * 4, 4, 430.0) == pytest.approx(rtd.to_resistance(code), rel=1e-9)
