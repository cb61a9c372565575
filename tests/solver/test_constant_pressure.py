"""Constant-pressure filtration and washing against Geankoplis' worked examples."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from server.solver import constant_pressure as cp
from server.solver.washing import wash_time

# Geankoplis, Transport Processes (3rd ed.), Example 14.2-1: lab data on a CaCO3 slurry.
MU, C_S, DP, A_LAB = 8.937e-4, 23.47, 338e3, 0.0439
ALPHA, R_M = 1.863e11, 10.63e10  # printed results of Example 14.2-1 (from memory)


@pytest.mark.reference
def test_constants_reproduce_geankoplis_example_14_2_1():
    # Printed: K_p = 6.00e6 s/m^6 and B = 6400 s/m^3.
    assert cp.cake_constant(MU, ALPHA, C_S, A_LAB, DP) == pytest.approx(6.00e6, rel=2e-3)
    assert cp.medium_constant(MU, R_M, A_LAB, DP) == pytest.approx(6400, rel=2e-3)


@pytest.mark.reference
def test_press_time_geankoplis_example_14_2_2():
    # Geankoplis Example 14.2-2 (from memory): 20 frames of 0.873 m^2, same pressure and cake,
    # 3.37 m^3 of filtrate takes t = 269.7 s (K_p = 37.93 s/m^6, B = 16.10 s/m^3 as printed).
    A = 20 * 0.873
    K_p = cp.cake_constant(MU, ALPHA, C_S, A, DP)
    B = cp.medium_constant(MU, R_M, A, DP)
    assert K_p == pytest.approx(37.93, rel=2e-3)
    assert B == pytest.approx(16.10, rel=2e-3)
    assert cp.time_for_volume(3.37, K_p, B) == pytest.approx(269.7, rel=2e-3)


@pytest.mark.reference
def test_through_washing_time_geankoplis_example_14_2_3():
    # Geankoplis Example 14.2-3 (from memory): the press of 14.2-2 is through-washed with
    # 10 % of the 3.37 m^3 filtrate; the wash takes about 194.3 s and, with 20 min of
    # cleaning, the whole cycle about 1664 s.
    A = 20 * 0.873
    K_p = cp.cake_constant(MU, ALPHA, C_S, A, DP)
    B = cp.medium_constant(MU, R_M, A, DP)
    t_w = wash_time(0.337, cp.rate_at_volume(3.37, K_p, B), "through", MU, MU, DP, DP)
    assert t_w == pytest.approx(194.3, rel=3e-3)
    assert cp.time_for_volume(3.37, K_p, B) + t_w + 1200 == pytest.approx(1664, rel=1e-3)


def test_simple_washing_is_four_times_faster_than_through_washing():
    # Through-washing rate is 1/4 of the final rate, simple washing equals it (texts above).
    through = wash_time(1.0, 2e-3, "through", 1e-3, 1e-3, 5e5, 5e5)
    simple = wash_time(1.0, 2e-3, "simple", 1e-3, 1e-3, 5e5, 5e5)
    assert through == pytest.approx(4 * simple, rel=1e-15)
    assert simple == pytest.approx(500.0, rel=1e-15)


def test_wash_time_scales_with_viscosity_and_inverse_pressure():
    base = wash_time(1.0, 2e-3, "simple", 1e-3, 1e-3, 5e5, 5e5)
    assert wash_time(1.0, 2e-3, "simple", 1e-3, 2e-3, 5e5, 2.5e5) == pytest.approx(4 * base)


@given(
    K_p=st.floats(min_value=1e-3, max_value=1e9),
    B=st.floats(min_value=0.0, max_value=1e6),
    t=st.floats(min_value=1e-3, max_value=1e6),
)
def test_volume_at_time_inverts_time_for_volume(K_p, B, t):
    V = cp.volume_at_time(t, K_p, B)
    assert np.isfinite(V) and V > 0
    assert cp.time_for_volume(V, K_p, B) == pytest.approx(t, rel=1e-9)


def test_rate_is_the_derivative_of_volume():
    K_p, B = 40.0, 16.0
    V = np.linspace(0.1, 5.0, 50)
    h = 1e-6
    dt_dV = (cp.time_for_volume(V + h, K_p, B) - cp.time_for_volume(V - h, K_p, B)) / (2 * h)
    np.testing.assert_allclose(cp.rate_at_volume(V, K_p, B), 1 / dt_dV, rtol=1e-8)
