"""Water c_p and density: the fast fit against IAPWS-95 (iapws package) and published values."""

import numpy as np
import pytest

from heatlog.energetics.water import (
    iapws_cp,
    iapws_density,
    water_cp,
    water_cp_input,
    water_density,
)
from heatlog.errors import RangeError


@pytest.mark.parametrize(
    ("t_c", "cp"),
    [(0.01, 4.2194), (20.0, 4.1841), (25.0, 4.1813), (40.0, 4.1794)],
    ids=["0.01C", "20C", "25C", "40C"],
)
def test_cp_published_values(t_c, cp):
    # IAPWS-95 at 0.101325 MPa (docs/REFERENCES.md: IAPWS95, computed with the iapws package); tol 1e-4 J/(g·K)
    assert water_cp(t_c) == pytest.approx(cp, abs=1e-4)


@pytest.mark.parametrize(("t_c", "rho"), [(20.0, 998.21), (25.0, 997.05)], ids=["20C", "25C"])
def test_density_published_values(t_c, rho):
    # IAPWS-95 at 0.101325 MPa (docs/REFERENCES.md: IAPWS95); tol 0.02 kg/m³
    assert water_density(t_c) == pytest.approx(rho, abs=0.02)


def test_fit_matches_iapws_between_fit_nodes():
    # Independent check: the iapws package itself, at points that are not the fit's nodes.
    ts = np.array([0.5, 3.7, 11.3, 18.9, 26.1, 33.3, 47.7, 58.1, 71.9, 84.4, 93.3, 99.5])
    for t in ts:
        assert water_cp(t) == pytest.approx(iapws_cp(t), abs=1e-4)
        assert water_density(t) == pytest.approx(iapws_density(t), abs=1e-3)


def test_vectorised_and_range():
    ts = np.array([10.0, 20.0, 30.0])
    np.testing.assert_allclose(water_cp(ts), [water_cp(t) for t in ts], rtol=0, atol=1e-12)
    with pytest.raises(RangeError, match="outside"):
        water_cp(120.0)
    with pytest.raises(RangeError):
        water_density(-5.0)


def test_input_carries_iapws_uncertainty():
    x = water_cp_input(25.0)
    assert x.u == pytest.approx(1e-3 * x.value)
    assert "IAPWS-95" in x.note
