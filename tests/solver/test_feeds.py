"""Feed modes: constant rate, pump curve and pressure steps against closed forms."""

import numpy as np
import pytest

from server.solver import (
    ConstantPressure,
    ConstantRate,
    CycleFamily,
    CycleSettings,
    EndCriterion,
    Filtration,
    Press,
    PressSystem,
    PressureSteps,
    PumpCurve,
    SolverInputError,
    compare_thicknesses,
    solve_cycle,
)
from server.solver.feeds import _supply_curve

MU, ALPHA, C, A, R_M = 1e-3, 1e11, 250.0, 50.0, 5e10


def filtration(s=0.0, R_m=R_M, p_ref=5e5):
    return Filtration(C, 0.15, 1.6, MU, ALPHA, p_ref, s, R_m)


def system(feed, s=0.0, L=0.04, t_d=1200.0, wash_ratio=0.0, R_m=R_M):
    return PressSystem(filtration(s, R_m), Press(A, L), feed, CycleSettings(t_d, wash_ratio))


# --- constant rate, then constant pressure ----------------------------------------------------


@pytest.mark.reference
def test_constant_rate_switch_matches_the_published_closed_form():
    # Constant rate up to dP_max, then constant pressure, incompressible cake: switch volume
    # V1 = (A^2/(alpha c)) (dP_max/(mu Q) - R_m/A), t1 = V1/Q, then
    # t = t1 + (K_p/2)(V^2 - V1^2) + B (V - V1). Svarovsky (ed.), Solid-Liquid Separation,
    # and Wakeman & Tarleton, Solid/Liquid Separation, filtration theory chapters (from memory).
    Q0, Pm = 0.02, 6e5
    curve = ConstantRate(Q0, Pm).curve(filtration(), A)
    V1 = A**2 / (ALPHA * C) * (Pm / (MU * Q0) - R_M / A)
    assert curve.V1 == pytest.approx(V1, rel=1e-12)
    K_p, B = MU * ALPHA * C / (A**2 * Pm), MU * R_M / (A * Pm)
    V = np.linspace(0, 3 * V1, 50)
    expected = np.where(V <= V1, V / Q0, V1 / Q0 + K_p / 2 * (V**2 - V1**2) + B * (V - V1))
    np.testing.assert_allclose(curve.time(V), expected, rtol=1e-12)
    np.testing.assert_allclose(curve.volume(expected), V, rtol=1e-10, atol=1e-12)


@pytest.mark.parametrize("s", [0.0, 0.45])
def test_constant_rate_through_the_general_root_find_matches_the_closed_form(s):
    feed = ConstantRate(0.02, 6e5)
    f = filtration(s)
    closed = feed.curve(f, A)
    general = _supply_curve(feed, f, A, 4 * closed.V1, 2000)
    V = np.linspace(0, 3 * closed.V1, 400)
    np.testing.assert_allclose(general.time(V), closed.time(V), rtol=1e-9)
    # pressure is interpolated linearly between grid nodes (time is integrated exactly)
    np.testing.assert_allclose(general.pressure_at(V), closed.pressure_at(V), rtol=1e-4)


def test_compressible_rate_stage_pressure_solves_the_rate_equation():
    Q0, f = 0.02, filtration(0.6, p_ref=1e5)
    curve = ConstantRate(Q0, 8e5).curve(f, A)
    V = np.linspace(0.01, 0.99, 20) * curve.V1
    P = curve.pressure_at(V)
    rhs = MU * Q0 * (f.specific_resistance(P) * C * V / A**2 + R_M / A)
    np.testing.assert_allclose(P, rhs, rtol=1e-10)


def test_a_flow_the_clean_cloth_cannot_pass_is_a_warning_not_an_error():
    Pm = 3e5
    q_clean = Pm * A / (MU * R_M)
    sol = solve_cycle(system(ConstantRate(2 * q_clean, Pm)))
    assert any("clean cloth" in w for w in sol.warnings)
    cp = solve_cycle(system(ConstantPressure(Pm)))
    assert sol.best.filtrate_throughput == pytest.approx(cp.best.filtrate_throughput, rel=1e-12)


# --- pump curves ------------------------------------------------------------------------------


def test_a_flat_pump_curve_reduces_to_constant_pressure():
    P0 = 5e5
    q_clean = P0 * A / (MU * R_M)
    pump = PumpCurve(((0.0, P0), (0.5 * q_clean, P0), (1.5 * q_clean, P0)))
    for L in (0.02, 0.5):  # chamber-limited and optimum-limited
        a, b = solve_cycle(system(pump, L=L)), solve_cycle(system(ConstantPressure(P0), L=L))
        for key in ("filtrate_volume", "filtration_time", "filtrate_throughput", "cycle_time"):
            assert getattr(a.best, key) == pytest.approx(getattr(b.best, key), rel=1e-6), key


@pytest.mark.parametrize("wash_ratio", [0.0, 1.5])
def test_the_general_optimum_reproduces_the_closed_form(wash_ratio):
    P0 = 5e5
    q_clean = P0 * A / (MU * R_M)
    pump = PumpCurve(((0.0, P0), (1.5 * q_clean, P0)))
    general = CycleFamily(filtration(0.3), A, pump, CycleSettings(1200.0, wash_ratio), 10.0)
    closed = CycleFamily(filtration(0.3), A, ConstantPressure(P0), CycleSettings(1200.0, wash_ratio), 10.0)
    assert general.V_star == pytest.approx(closed.V_star, rel=1e-6)


def falling_pump():
    # An invented centrifugal pump: 60 m^3/h at 1 bar falling to 7 bar at 5 m^3/h.
    Q = np.array([5, 15, 30, 45, 60]) / 3600
    P = np.array([7.0, 6.4, 5.0, 3.0, 1.0]) * 1e5
    return Q, P


def test_pump_curve_operating_points_match_the_explicit_inverse():
    # For an incompressible cake the volume at which the pump runs at pressure P is explicit:
    # V(P) = (A^2/(alpha c)) (P/(mu Q_pump(P)) - R_m/A) -- an independent check of the root find.
    Q, P = falling_pump()
    pump = PumpCurve(tuple(zip(Q, P)))
    curve = pump.curve(filtration(), A, 30.0)
    Ps = np.linspace(1.5e5, 6.8e5, 30)
    V_of_P = A**2 / (ALPHA * C) * (Ps / (MU * pump.supply_flow(Ps)) - R_M / A)
    np.testing.assert_allclose(curve.pressure_at(V_of_P), Ps, rtol=2e-4)


@pytest.mark.parametrize("basis", ["total", "cake"])
@pytest.mark.parametrize("s", [0.0, 0.45, 0.9])
@pytest.mark.parametrize("R_m", [R_M, 0.0])
@pytest.mark.parametrize("feed", ["pump", "set_flow"])
def test_per_segment_operating_point_matches_bisection_and_the_rate_equation(s, R_m, basis, feed):
    # The exact-per-segment solve (the supply table's nodes) against the general bisection
    # (the same table, its nodes hidden; on the cake basis the bisection on the cake's own
    # pressure) and against the rate equation it must satisfy.
    from dataclasses import replace

    from server.solver.curves import cake_flow, operating_point

    Q, P = falling_pump()
    pump = PumpCurve(tuple(zip(Q, P)), max_pressure=6.5e5) if feed == "pump" else ConstantRate(40 / 3600, 6.5e5)
    table = pump.supply_flow
    f = replace(filtration(s, R_m), pressure_basis=basis)
    V = np.concatenate(([0.0], np.geomspace(1e-4, 80.0, 3000)))
    fast_P, fast_Q = operating_point(table, pump.pressure_cap, V, f, A)
    slow_P, slow_Q = operating_point(lambda p: table(p), pump.pressure_cap, V, f, A)
    tol = 1e-9 if basis == "total" else 1e-7  # the cake-basis bisection stops at 2^-60 of the cap
    # ... so it cannot see a cake pressure below that (s = 0.9 at the first drops: about 1e-30 Pa);
    # there the rate equation below is the check
    cake_p = fast_P - (MU * R_m / A * fast_Q if basis == "cake" else 0.0)
    seen = cake_p > 1e-9 * pump.pressure_cap if basis == "cake" else np.ones_like(V, dtype=bool)
    np.testing.assert_allclose(fast_P[seen], slow_P[seen], rtol=tol, atol=tol * pump.pressure_cap)
    np.testing.assert_allclose(fast_Q[seen], slow_Q[seen], rtol=tol)
    assert fast_P.max() <= pump.pressure_cap
    held = fast_P < pump.pressure_cap * (1 - 1e-12)
    # where the pressure is below the cap the cake passes exactly what the pump gives
    passes = cake_flow(fast_P[held], V[held], f, A)
    np.testing.assert_allclose(np.where(np.isfinite(passes), passes, fast_Q[held]), table(fast_P[held]), rtol=1e-9)


def test_pump_curve_mass_balance_and_pressure_limit():
    Q, P = falling_pump()
    pump = PumpCurve(tuple(zip(Q, P)), max_pressure=5.5e5)
    family = CycleFamily(filtration(0.3), A, pump, CycleSettings(1200.0), 20.0)
    V = np.linspace(0, 20.0, 20001)
    t = family.curve.time(V)
    flow = family.curve.rate(V)
    integral = np.concatenate(([0], np.cumsum(0.5 * (flow[1:] + flow[:-1]) * np.diff(t))))
    np.testing.assert_allclose(integral, V, rtol=1e-5, atol=1e-9)
    assert np.all(family.curve.pressure_at(V) <= 5.5e5 * (1 + 1e-12))
    assert family.curve.pressure_at(20.0) == pytest.approx(5.5e5)


def test_pump_curve_time_and_volume_are_inverse():
    Q, P = falling_pump()
    curve = PumpCurve(tuple(zip(Q, P))).curve(filtration(0.3), A, 20.0)
    t = np.linspace(0, float(curve.time(20.0)), 300)
    np.testing.assert_allclose(curve.time(curve.volume(t)), t, rtol=1e-10, atol=1e-9)


def test_pump_fed_cycle_is_slower_than_constant_pressure_at_its_shut_off():
    Q, P = falling_pump()
    pump = solve_cycle(system(PumpCurve(tuple(zip(Q, P))), L=0.2))
    cp = solve_cycle(system(ConstantPressure(P.max()), L=0.2))
    assert pump.best.filtrate_throughput < cp.best.filtrate_throughput


@pytest.mark.parametrize(
    "points,fragment",
    [(((0.0, 5e5), (0.01, 6e5)), "rises"), (((0.01, 5e5),), "at least two"),
     (((0.0, 5e5), (0.0, 4e5)), "same flow"), (((-0.01, 5e5), (0.01, 4e5)), ">= 0"),
     (((0.0, 5e5), (0.01, 0.0)), "> 0")],
)
def test_invalid_pump_curves_are_refused(points, fragment):
    with pytest.raises(SolverInputError, match=fragment):
        PumpCurve(points)


# --- pressure steps ---------------------------------------------------------------------------


def test_a_single_pressure_step_reduces_to_constant_pressure():
    a = solve_cycle(system(PressureSteps(((5e5, 600.0),)), s=0.4))
    b = solve_cycle(system(ConstantPressure(5e5), s=0.4))
    for key in ("filtrate_volume", "filtration_time", "filtrate_throughput"):
        assert getattr(a.best, key) == pytest.approx(getattr(b.best, key), rel=1e-6)


def test_pressure_steps_follow_each_step_in_closed_form():
    f = filtration(0.4)
    steps = PressureSteps(((2e5, 300.0), (4e5, 600.0), (7e5, 60.0)))
    curve = steps.curve(f, A)
    # each step is constant-pressure filtration from where the last one ended
    for i, (P, _) in enumerate(steps.steps):
        K = MU * f.specific_resistance(P) * C / (A**2 * P)
        B = MU * R_M / (A * P)
        V0, t0 = curve.V_starts[i], curve.starts[i]
        V = V0 + np.linspace(0, 0.5, 5)
        np.testing.assert_allclose(curve.time(V), t0 + K / 2 * (V**2 - V0**2) + B * (V - V0), rtol=1e-12)
        assert curve.pressure_at(V0 + 1e-9) == P
    assert curve.starts.tolist() == [0.0, 300.0, 900.0]
    np.testing.assert_allclose(curve.volume(curve.time(np.linspace(0, 10, 50))), np.linspace(0, 10, 50), rtol=1e-10)


@pytest.mark.parametrize("steps", [((5e5, 0.0),), ((5e5, 600.0), (0.0, 60.0)), ()])
def test_invalid_pressure_steps_are_refused(steps):
    with pytest.raises(SolverInputError):
        PressureSteps(steps)


def test_non_positive_set_flow_is_refused():
    with pytest.raises(SolverInputError) as err:
        ConstantRate(0.0, 5e5)
    assert err.value.parameter == "flow"


# --- end of filtration ------------------------------------------------------------------------


def test_time_end_criterion_ends_at_that_time():
    sol = solve_cycle(system(ConstantPressure(5e5), L=0.3), EndCriterion("time", time=600.0))
    assert sol.at_end.end_reason == "time"
    assert sol.at_end.cycle.filtration_time == pytest.approx(600.0, rel=1e-12)
    assert sol.at_end.throughput_ratio_to_best <= 1.0


def test_flow_end_criterion_matches_constant_pressure_closed_form():
    P0 = 5e5
    K_p, B = MU * ALPHA * C / (A**2 * P0), MU * R_M / (A * P0)
    q_end = 0.25 / B
    sol = solve_cycle(system(ConstantPressure(P0), L=0.5), EndCriterion("flow", flow=q_end))
    assert sol.at_end.end_reason == "flow"
    assert sol.at_end.cycle.filtrate_volume == pytest.approx((1 / q_end - B) / K_p, rel=1e-9)
    per_area = solve_cycle(system(ConstantPressure(P0), L=0.5), EndCriterion("flow", flow_per_area=q_end / A))
    fraction = solve_cycle(system(ConstantPressure(P0), L=0.5), EndCriterion("flow", flow_fraction=0.25))
    for other in (per_area, fraction):
        assert other.at_end.cycle.filtrate_volume == pytest.approx(sol.at_end.cycle.filtrate_volume, rel=1e-9)


def test_terminal_pressure_end_in_the_constant_rate_stage():
    Q0, Pm, P_end = 0.02, 6e5, 4e5
    sol = solve_cycle(system(ConstantRate(Q0, Pm), L=0.3), EndCriterion("pressure", pressure=P_end))
    expected = (P_end / (MU * Q0) - R_M / A) * A**2 / (ALPHA * C)
    assert sol.at_end.end_reason == "pressure"
    assert sol.at_end.cycle.filtrate_volume == pytest.approx(expected, rel=1e-9)
    assert sol.at_end.cycle.final_pressure == pytest.approx(P_end, rel=1e-9)


def test_an_end_past_full_chambers_stops_at_full_chambers():
    sol = solve_cycle(system(ConstantPressure(5e5), L=0.02), EndCriterion("time", time=1e6))
    assert sol.at_end.end_reason == "chambers_full"
    assert sol.at_end.cycle.chamber_fill == pytest.approx(1.0)


@pytest.mark.parametrize(
    "feed,end,parameter",
    [(ConstantPressure(5e5), EndCriterion("pressure", pressure=6e5), "end.pressure"),
     (ConstantPressure(5e5), EndCriterion("pressure", pressure=4e5), "end.pressure"),
     (ConstantPressure(5e5), EndCriterion("flow", flow=1e3), "end.flow")],
)
def test_end_criteria_that_cannot_happen_are_refused(feed, end, parameter):
    with pytest.raises(SolverInputError) as err:
        solve_cycle(system(feed), end)
    assert err.value.parameter == parameter


def test_curves_run_to_full_chambers_with_equal_lengths():
    Q, P = falling_pump()
    sol = solve_cycle(system(PumpCurve(tuple(zip(Q, P))), L=0.04))
    lengths = {len(v) for v in sol.curves.values()}
    assert lengths == {241}
    assert sol.curves["filtrate_volume"][-1] == pytest.approx(sol.chambers_full_volume)
    assert sol.curves["cake_thickness"][-1] == pytest.approx(0.02)
    assert np.all(np.diff(sol.curves["time"]) > 0)


def test_thickness_comparison_with_a_pump_matches_single_solves():
    Q, P = falling_pump()
    c = system(PumpCurve(tuple(zip(Q, P))))
    for L, sol in compare_thicknesses(c, [0.02, 0.04, 0.08]):
        single = solve_cycle(PressSystem(c.filtration, c.press.with_thickness(L), c.feed, c.cycle))
        assert sol.best.filtrate_throughput == pytest.approx(single.best.filtrate_throughput, rel=1e-6)


def test_a_pump_curve_without_a_shut_off_point_is_a_warning():
    Q, P = falling_pump()  # lowest listed flow 5 m^3/h
    sol = solve_cycle(system(PumpCurve(tuple(zip(Q, P)))))
    assert any("shut-off" in w for w in sol.warnings)
    with_zero = PumpCurve(((0.0, 7.2e5), *zip(Q, P)))
    assert not any("shut-off" in w for w in solve_cycle(system(with_zero)).warnings)
