"""Water properties against the IAPWS formulations (through the iapws package)."""

import pytest
from iapws import IAPWS95
from iapws._iapws import _Viscosity

from server.solver import SolverInputError
from server.solver.water import water_density, water_viscosity

TEMPERATURES_C = [0.5, 5, 10, 15, 20, 25, 30, 40, 50, 60, 70, 80, 90, 99]


@pytest.mark.reference
@pytest.mark.parametrize("theta", TEMPERATURES_C)
def test_viscosity_matches_iapws_2008_within_half_a_percent(theta):
    # IAPWS 2008 viscosity formulation, evaluated by iapws at the IAPWS-95 density, 0.101325 MPa.
    T = 273.15 + theta
    rho = IAPWS95(T=T, P=0.101325).rho
    assert water_viscosity(T) == pytest.approx(_Viscosity(rho, T), rel=5e-3)


@pytest.mark.reference
def test_viscosity_at_20c_is_the_iapws_value():
    # IAPWS R12-08 (2008), viscosity of ordinary water: 1.0016 mPa*s at 20 degC and 0.1 MPa
    # (from memory of its check table).
    assert water_viscosity(293.15) == pytest.approx(1.0016e-3, rel=1e-4)


@pytest.mark.reference
@pytest.mark.parametrize("theta", TEMPERATURES_C)
def test_density_matches_iapws_95_within_0p05_percent(theta):
    T = 273.15 + theta
    assert water_density(T) == pytest.approx(IAPWS95(T=T, P=0.101325).rho, rel=5e-4)


def test_viscosity_halves_roughly_between_10_and_50_c():
    # Water's viscosity falls by about half between 10 degC and 50 degC (common practice, no
    # source; the IAPWS values behind water_viscosity are checked above).
    ratio = water_viscosity(323.15) / water_viscosity(283.15)
    assert 0.38 < ratio < 0.46


@pytest.mark.parametrize("T", [273.15, 200.0, 373.15, 400.0])
def test_temperature_outside_liquid_range_is_refused(T):
    with pytest.raises(SolverInputError) as err:
        water_viscosity(T)
    assert err.value.parameter == "temperature"
