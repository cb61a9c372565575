"""Production planning science (server/solver/planning.py) against hand calculations, brute
force and closed forms."""

import math
from dataclasses import replace

import numpy as np
import pytest

from server.solver import (
    ConstantPressure,
    CycleSettings,
    Filtration,
    Press,
    PressSystem,
    PumpCurve,
    cycle_family_for,
    planning,
    solve_cycle,
)


def system(downtime=1200.0, medium_resistance=5e10, wash_ratio=0.0, thickness=0.04, area=50.0, feed=None):
    f = Filtration(solids_per_filtrate=300.0, cake_volume_ratio=0.2, wet_to_dry_ratio=1.6, viscosity=1e-3,
                   resistance_ref=1e11, reference_pressure=5e5, compressibility=0.0,
                   medium_resistance=medium_resistance, porosity=0.5)
    return PressSystem(f, Press(area, thickness), feed or ConstantPressure(5e5),
                       CycleSettings(downtime=downtime, wash_ratio=wash_ratio))


def test_required_rate_follows_a_hand_calculation():
    # 100 t of dry solids a calendar day = 700 t a week; on 5 working days 140 t a day;
    # 16 h a day at 85 % availability = 13.6 h cycling; 140 t / 13.6 h = 10.294 t/h;
    # with a 10 % margin 11.324 t/h. Derived here.
    per_day = 100e3 / 86400.0  # kg/s averaged over calendar days
    step_week = 100e3 * 7
    step_working_day = step_week / 5
    step_cycling_hours = 16 * 0.85
    expected = step_working_day / step_cycling_hours * 1.10 / 3600.0
    assert planning.required_rate(per_day, 16, 5, 0.85, 0.10) == pytest.approx(expected, rel=1e-12)


def test_presses_needed_is_the_smallest_whole_number_that_meets():
    for required in (0.5, 1.0, 2.0, 2.01, 7.3):
        n = planning.presses_needed(required, 1.0)
        assert n * 1.0 >= required and (n == 1 or (n - 1) * 1.0 < required)


@pytest.mark.parametrize("shift_h", [2.0, 8.0, 12.0])
@pytest.mark.parametrize("thickness", [0.02, 0.04])
def test_whole_cycles_fit_the_shift_and_beat_brute_force(shift_h, thickness):
    s = system(thickness=thickness)
    sol = solve_cycle(s, with_curves=False)
    family = cycle_family_for(s)
    S = shift_h * 3600.0
    plan = planning.whole_cycle_schedule(family, sol.chambers_full_volume, sol.best.filtrate_volume, S)
    assert plan.cycles_per_shift * plan.cycle_time <= S * (1 + 1e-9)
    assert plan.filtrate_throughput <= sol.best.filtrate_throughput * (1 + 1e-12)
    # brute force: every end volume on a fine grid, as many whole cycles as fit
    V = np.linspace(sol.chambers_full_volume / 20000, sol.chambers_full_volume, 20000)
    per_shift = np.floor(S / family.cycle_time(V)) * V
    assert plan.filtrate_throughput * S >= per_shift.max() * (1 - 1e-6)
    assert plan.filtrate_throughput * S <= per_shift.max() * (1 + 1e-3)


def test_a_shift_shorter_than_the_downtime_is_refused():
    s = system(downtime=3600.0)
    sol = solve_cycle(s, with_curves=False)
    with pytest.raises(planning.SolverInputError) as exc:
        planning.whole_cycle_schedule(cycle_family_for(s), sol.chambers_full_volume, sol.best.filtrate_volume, 1800.0)
    assert exc.value.parameter == "shift.length"


def test_best_interval_matches_a_brute_force_loop():
    rng = np.random.default_rng(3)
    T = 1000.0 + np.cumsum(rng.uniform(0.0, 20.0, 300))
    t_w = 5000.0
    best, best_rate = None, -1.0
    for N in range(1, 301):
        rate = N / (sum(T[:N]) + t_w)
        if rate > best_rate:
            best, best_rate = N, rate
    assert planning.best_interval(T, t_w)[0] == best


@pytest.mark.parametrize("growth", [1e8, 1e9, 1e10])
@pytest.mark.parametrize("wash_time", [1800.0, 7200.0])
def test_cloth_wash_interval_agrees_with_sqrt_2_tw_over_delta(growth, wash_time):
    # At constant pressure t_f = K_p V^2/2 + B V with B proportional to R_m: a cloth whose R_m
    # grows linearly makes each cycle delta = mu g V / (A dP) longer, the classic
    # assumptions; the integer optimum is then the floor or the ceiling of sqrt(2 t_w/delta).
    s = system(wash_ratio=0.5)
    V = solve_cycle(s, with_curves=False).best.filtrate_volume
    wear = planning.cloth_wear(s, V, growth, wash_time)
    f = s.filtration
    by_hand = f.viscosity * growth * V / (s.press.filter_area * s.feed.pressure)
    # the wash (through-washing at the final rate) grows with the cloth too: a = 4 r
    by_hand *= 1 + 4 * 0.5
    assert wear.first_increase == pytest.approx(by_hand, rel=1e-9)
    classic = math.sqrt(2 * wash_time / by_hand)
    assert wear.classic_interval == pytest.approx(classic, rel=1e-9)
    assert wear.best_interval in (math.floor(classic), math.ceil(classic))
    # brute force over N with cycle times worked out one by one
    # the cycle times, each from its own worn cloth, and the brute force over N on them
    for k in (0, 1, 2, wear.best_interval):
        assert wear.cycle_times[k] == pytest.approx(_cycle_time(s, V, growth, k), rel=1e-9)
    rates = [N / (np.sum(wear.cycle_times[:N]) + wash_time) for N in range(1, wear.cycle_times.size + 1)]
    assert int(np.argmax(rates)) + 1 == wear.best_interval


def _cycle_time(s, V, growth, k):
    worn = planning.worn_system(s, growth, k)
    return float(cycle_family_for(worn).cycle_time(V))


def test_cloth_wear_on_a_pump_fed_press_interpolates_between_exact_cycles():
    pump = PumpCurve(((0.0, 7e5), (0.01, 5e5), (0.02, 1e5)))
    s = system(feed=pump)
    V = solve_cycle(s, with_curves=False).best.filtrate_volume
    wear = planning.cloth_wear(s, V, 5e9, 3600.0)
    for k in (0, 1, 7):
        assert wear.cycle_times[k] == pytest.approx(_cycle_time(s, V, 5e9, k), rel=1e-9)
    assert np.all(np.diff(wear.cycle_times) >= 0)


@pytest.mark.parametrize("kw", [{}, {"wash_ratio": 0.8}, {"thickness": 0.015}, {"medium_resistance": 0.0},
                                {"downtime": 300.0, "wash_ratio": 0.3}])
def test_vectorised_best_cycles_equal_the_cycle_solver(kw):
    s = system(**kw)
    f, c = s.filtration, s.cycle
    alphas = np.array([0.5e11, 1e11, 3e11])
    arrays = planning.SampledSystems(
        viscosity=f.viscosity, resistance_ref=alphas, reference_pressure=f.reference_pressure,
        compressibility=f.compressibility, medium_resistance=f.medium_resistance,
        solids_per_filtrate=f.solids_per_filtrate, cake_volume_ratio=f.cake_volume_ratio,
        wash_per_filtrate=c.wash_ratio, pressure=s.feed.pressure, downtime=c.downtime,
        filter_area=s.press.filter_area, chamber_thickness=s.press.chamber_thickness,
        fill_fraction=s.press.fill_fraction, washing=c.washing, wash_pressure=None, wash_viscosity=None)
    got = planning.best_cycles_constant_pressure(arrays)
    for i, a in enumerate(alphas):
        best = solve_cycle(replace(s, filtration=replace(f, resistance_ref=float(a))), with_curves=False).best
        assert got["solids_throughput"][i] == pytest.approx(best.solids_throughput, rel=1e-12)
        assert got["cycle_time"][i] == pytest.approx(best.cycle_time, rel=1e-12)


@pytest.mark.parametrize("rho", [-0.95, -0.5, 0.0, 0.7])
def test_sampled_correlation_matches_the_requested_one(rho):
    z1, z2 = planning.correlated_normals(np.random.default_rng(7), 20000, rho)
    # the sample correlation of 20,000 pairs has a standard error of about (1 - rho^2)/sqrt(n)
    assert np.corrcoef(z1, z2)[0, 1] == pytest.approx(rho, abs=4 * (1 - rho * rho) / math.sqrt(20000) + 1e-3)
    assert np.std(z2) == pytest.approx(1.0, abs=0.03)


def test_variance_shares_find_the_input_that_drives_the_spread():
    rng = np.random.default_rng(2)
    x1, x2, x3 = rng.normal(size=(3, 20000))
    y = 3.0 * x1 + 1.0 * x2  # shares 0.9, 0.1 and 0 (derived here)
    shares = planning.variance_shares({"a": x1, "b": x2, "c": x3}, y)
    assert shares["a"] == pytest.approx(0.9, abs=0.03)
    assert shares["b"] == pytest.approx(0.1, abs=0.03)
    assert shares["c"] < 0.01


def test_feed_energy_at_constant_pressure_is_pressure_times_volume():
    # E = (dP V + dP_w V_w) / eta at one pressure: 5 bar x (V + 0.5 V) / 0.5. Derived here.
    s = system(wash_ratio=0.5)
    V = solve_cycle(s, with_curves=False).best.filtrate_volume
    assert planning.feed_energy(cycle_family_for(s), V, 0.5) == pytest.approx(5e5 * 1.5 * V / 0.5, rel=1e-12)


def test_downtime_parts_add_up():
    parts = planning.DowntimeParts(fixed=600.0, per_chamber=20.0, cloth_wash_time=3600.0, cloth_wash_every=12)
    assert parts.per_cycle(30) == pytest.approx(600 + 20 * 30 + 3600 / 12)
    with pytest.raises(planning.SolverInputError):
        parts.per_cycle(None)
