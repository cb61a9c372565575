"""Slurry and cake balances: published examples and round trips."""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.solver import SolverInputError
from server.solver import slurry as sb


@pytest.mark.reference
def test_solids_per_filtrate_geankoplis_example_14_2_4():
    # Geankoplis, Transport Processes (3rd ed.), Example 14.2-4: rho = 996.9 kg/m^3,
    # x = 0.191, m = 2.0 gives c_x = 308.1 kg solids per m^3 filtrate (as printed).
    assert sb.solids_per_filtrate_from_mass_fraction(0.191, 2.0, 996.9) == pytest.approx(308.1, abs=0.05)


@pytest.mark.reference
def test_cake_volume_ratio_coulson_richardson_example_7_2():
    # Coulson & Richardson Vol. 2 (5th ed.), Example 7.2: 100 kg whiting per m^3 water,
    # solids 3000 kg/m^3, porosity 0.4: v = 0.0568 m^3 cake per m^3 filtrate.
    m = sb.wet_to_dry_from_porosity(0.4, 3000.0, 1000.0)
    x = 100.0 / 1100.0
    c = sb.solids_per_filtrate_from_mass_fraction(x, m, 1000.0)
    assert sb.cake_volume_ratio(c, 0.4, 3000.0) == pytest.approx(0.0568, abs=5e-5)


def test_mass_fraction_and_concentration_routes_agree():
    # The same slurry described per kg and per m^3 of slurry gives the same c.
    x, m, rho_s, rho_l = 0.25, 1.8, 2700.0, 1000.0
    slurry_volume_per_kg = x / rho_s + (1 - x) / rho_l
    c_s = x / slurry_volume_per_kg
    a = sb.solids_per_filtrate_from_mass_fraction(x, m, rho_l)
    b = sb.solids_per_filtrate_from_concentration(c_s, m, rho_s, rho_l)
    assert a == pytest.approx(b, rel=1e-12)


fractions = st.floats(min_value=1e-4, max_value=0.9999)
densities = st.floats(min_value=500.0, max_value=20000.0)


@given(w=fractions)
def test_moisture_round_trips(w):
    assert sb.moisture_from_wet_to_dry(sb.wet_to_dry_from_moisture(w)) == pytest.approx(w, rel=1e-9, abs=1e-12)


@given(eps=fractions, rho_s=densities, rho_l=st.floats(min_value=600.0, max_value=2000.0))
def test_porosity_round_trips(eps, rho_s, rho_l):
    m = sb.wet_to_dry_from_porosity(eps, rho_s, rho_l)
    assert sb.porosity_from_wet_to_dry(m, rho_s, rho_l) == pytest.approx(eps, rel=1e-9, abs=1e-12)


@given(x=st.floats(min_value=1e-5, max_value=0.95), m=st.floats(min_value=1.0001, max_value=20.0))
def test_mass_fraction_round_trips(x, m):
    if m * x >= 0.999:
        return
    c = sb.solids_per_filtrate_from_mass_fraction(x, m, 998.0)
    assert math.isfinite(c) and c > 0
    assert sb.mass_fraction_from_solids_per_filtrate(c, m, 998.0) == pytest.approx(x, rel=1e-9)


def test_mass_fraction_that_leaves_no_filtrate_is_refused():
    with pytest.raises(SolverInputError, match="no filtrate") as err:
        sb.solids_per_filtrate_from_mass_fraction(0.6, 2.0, 998.0)
    assert err.value.parameter == "solids_mass_fraction"


def test_concentration_that_leaves_no_filtrate_is_refused():
    with pytest.raises(SolverInputError, match="no filtrate"):
        sb.solids_per_filtrate_from_concentration(1500.0, 2.0, 2500.0, 1000.0)


@pytest.mark.parametrize("eps", [0.0, 1.0, -0.1, 1.5])
def test_porosity_outside_open_unit_interval_is_refused(eps):
    with pytest.raises(SolverInputError):
        sb.wet_to_dry_from_porosity(eps, 2500.0, 1000.0)
