"""Chart series (solver/sweeps.py): every point is a whole cycle of the same solution.

The oracle is Ruth's equation with the through-washing rule written out here again
(tests/solver/test_cycle.py's brute_force_throughput), so a chart that dropped a stage of
the cycle or computed the chamber limit its own way would fail.
"""

import numpy as np
import pytest

from server.solver import (
    ConstantPressure,
    ConstantRate,
    CycleSettings,
    PressSystem,
    PressureSteps,
    PumpCurve,
    chart_series,
    cycle_family_for,
    solve_cycle,
)
from tests.solver.test_cycle import brute_force_throughput, make_system


def _solved(system):
    family = cycle_family_for(system)
    return family, solve_cycle(system, family=family)


def _volume_at(t, K_p, B):
    """Ruth's equation t = K_p V^2/2 + B V solved for V (constant pressure)."""
    return (-B + np.sqrt(B * B + 2.0 * K_p * t)) / K_p


@pytest.mark.parametrize("wash_ratio", [0.0, 1.5])
def test_every_point_of_the_time_series_is_a_whole_cycle_by_ruths_equation(wash_ratio):
    system = make_system(L=0.05, wash_ratio=wash_ratio, wash_pressure=3e5)
    family, sol = _solved(system)
    s = chart_series(family, system, sol)["throughput_time"]
    Q, K_p, B = brute_force_throughput(system)
    t_f = np.array(s["filtration_time"])
    V = _volume_at(t_f, K_p, B)
    np.testing.assert_allclose(np.array(s["filtrate_throughput"]), Q(V), rtol=1e-9)
    np.testing.assert_allclose(np.array(s["cycle_time"]), V / Q(V), rtol=1e-9)
    if wash_ratio:  # the wash is in the cycle time, not only filtration and downtime
        assert np.all(np.array(s["cycle_time"]) > t_f + system.cycle.downtime)


def test_the_peak_of_the_feasible_time_series_is_the_best_cycle():
    system = make_system(L=0.5, wash_ratio=1.0)
    family, sol = _solved(system)
    s = chart_series(family, system, sol)["throughput_time"]
    feasible = [q for q, ok in zip(s["filtrate_throughput"], s["feasible"]) if ok]
    assert max(feasible) <= sol.best.filtrate_throughput * (1 + 1e-12)
    assert max(feasible) == pytest.approx(sol.best.filtrate_throughput, rel=2e-3)


def test_the_thickness_series_at_this_press_is_its_best_cycle():
    system = make_system(L=0.03)
    family, sol = _solved(system)
    s = chart_series(family, system, sol)["throughput_thickness"]
    k = s["chamber_thickness"].index(0.03)
    assert s["filtrate_throughput"][k] == pytest.approx(sol.best.filtrate_throughput, rel=1e-12)
    assert s["chamber_fill"][k] == pytest.approx(sol.best.chamber_fill, rel=1e-12)
    # thicker chambers never lower the best throughput (a thin chamber caps the volume)
    assert np.all(np.diff(s["filtrate_throughput"]) >= -1e-15)


def test_the_map_stops_each_row_at_full_chambers():
    system = make_system(L=0.04)
    family, sol = _solved(system)
    m = chart_series(family, system, sol)["throughput_map"]
    Q, K_p, B = brute_force_throughput(system)
    p, v = system.press, system.filtration.cake_volume_ratio
    for L, row, t_full in zip(m["chamber_thickness"], m["filtrate_throughput"], m["chambers_full_time"]):
        V_full = p.fill_fraction * p.filter_area * L / (2 * v)  # written out again: f A L / (2 v)
        assert t_full == pytest.approx(K_p * V_full**2 / 2 + B * V_full, rel=1e-9)
        t = np.array(m["filtration_time"])
        expected = Q(np.minimum(_volume_at(t, K_p, B), V_full))
        np.testing.assert_allclose(row, expected, rtol=1e-9)


@pytest.mark.parametrize("feed,varies", [
    (ConstantPressure(5e5), False),
    (ConstantRate(0.01, 6e5), True),
    (PumpCurve(((0.0, 7e5), (0.05, 2e5))), True),
    (PressureSteps(((2e5, 600.0), (6e5, 600.0))), True),
])
def test_the_feed_says_whether_its_pressure_varies(feed, varies):
    base = make_system(L=0.04)
    system = PressSystem(base.filtration, base.press, feed, CycleSettings(1200.0))
    family, sol = _solved(system)
    s = chart_series(family, system, sol)
    assert s["pressure_varies"] is varies
    pressures = s["filtration"]["pressure"]
    assert (max(pressures) > min(pressures) * 1.01) is varies


@pytest.mark.parametrize("ratio", [0.2, 0.3, 0.6, 0.95, 1.0, 1.7, 2.8, 3.9, 4.5, 10.0])
def test_the_thickness_range_is_half_to_twice_the_chamber_widened_to_the_matched_thickness(ratio):
    from server.solver.sweeps import thickness_grid

    L = 0.032
    L_matched = ratio * L
    grid = thickness_grid(L, L_matched)
    assert np.all(np.diff(grid) > 0) and L in grid
    reachable = 0.25 <= ratio <= 4.0
    # half to twice the chamber; where the matched thickness is within a factor of 4 the range
    # takes it in with a tenth to spare, and the grid holds it exactly
    lo = min(0.5 * L, L_matched / 1.1) if reachable else 0.5 * L
    hi = max(2.0 * L, L_matched * 1.1) if reachable else 2.0 * L
    assert grid[0] == pytest.approx(lo, rel=1e-12) and grid[-1] == pytest.approx(hi, rel=1e-12)
    assert (L_matched in grid) is reachable


def test_the_thickness_range_stays_within_1_to_500_mm():
    from server.solver.sweeps import thickness_grid

    assert thickness_grid(0.0015, 0.0012)[0] == pytest.approx(1e-3)
    assert thickness_grid(0.3, 0.9)[-1] == pytest.approx(0.5)
    assert 0.3 in thickness_grid(0.3, 0.9)
