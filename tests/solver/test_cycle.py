"""The cycle optimum, the chamber limit and the thickness comparison."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from server.solver import (
    ConstantPressure,
    CycleSettings,
    Filtration,
    Press,
    PressSystem,
    SolverInputError,
    compare_thicknesses,
    numeric_optimum_volume,
    solve_cycle,
)
from server.solver import slurry as sb


def make_system(alpha=1e11, R_m=5e10, area=50.0, L=0.04, dP=5e5, t_d=1200.0, wash_ratio=0.0,
              washing="through", wash_pressure=None, wash_viscosity=None, mu=1e-3, c=250.0,
              v=0.15, s=0.0, fill=1.0):
    f = Filtration(c, v, 1.6, mu, alpha, 5e5, s, R_m)
    return PressSystem(
        f, Press(area, L, fill), ConstantPressure(dP),
        CycleSettings(t_d, wash_ratio, washing, wash_pressure, wash_viscosity),
    )


def brute_force_throughput(system):
    """Throughput written out again from Ruth's equation and the through-washing rule
    (wash rate = final rate / 4 for through-washing: McCabe, Smith & Harriott, Unit Operations
    of Chemical Engineering, 7th ed., ch. 30, from memory), independently of the solver."""
    f, p, cyc = system.filtration, system.press, system.cycle
    dP = system.feed.pressure
    alpha = f.resistance_ref * (dP / f.reference_pressure) ** f.compressibility
    K_p = f.viscosity * alpha * f.solids_per_filtrate / (p.filter_area**2 * dP)
    B = f.viscosity * f.medium_resistance / (p.filter_area * dP)
    phi = {"through": 4.0, "simple": 1.0}[cyc.washing]
    mu_w = cyc.wash_viscosity or f.viscosity
    dP_w = cyc.wash_pressure or dP

    def Q(V):
        t_f = K_p * V * V / 2 + B * V
        t_w = phi * cyc.wash_ratio * V * (K_p * V + B) * (mu_w / f.viscosity) * (dP / dP_w)
        return V / (t_f + t_w + cyc.downtime)

    return Q, K_p, B


def test_at_the_optimum_filtration_time_is_downtime_plus_medium_term():
    # Classic result: t_f* = t_d + B V* (McCabe, Smith & Harriott, Unit Operations of Chemical
    # Engineering, 7th ed., ch. 30, optimum cycle time; Coulson & Richardson's Chemical
    # Engineering Vol. 2, 5th ed., section 7.3; both from memory).
    system = make_system(L=0.2)
    sol = solve_cycle(system)
    u = sol.unconstrained_optimum
    assert u.filtration_time == pytest.approx(system.cycle.downtime + sol.B * u.filtrate_volume, rel=1e-12)


def test_with_washing_filtration_plus_wash_is_downtime_plus_medium_term():
    # With t_w = a V (K_p V + B), a = phi r (mu_w/mu)(dP/dP_w), setting dQ/dV = 0 in
    # Q = V / (K_p V^2/2 + B V + t_w + t_d) gives t_f* + t_w* = t_d + B (1 + a) V*
    # (derived here from the line above; the same steps as the classic result without wash).
    system = make_system(L=0.3, wash_ratio=1.5, wash_pressure=3e5, wash_viscosity=0.8e-3)
    sol = solve_cycle(system)
    u = sol.unconstrained_optimum
    a = 4 * 1.5 * 0.8 * (5e5 / 3e5)
    assert u.filtration_time + u.wash_time == pytest.approx(
        system.cycle.downtime + sol.B * (1 + a) * u.filtrate_volume, rel=1e-12
    )


def test_without_medium_resistance_filtration_time_equals_downtime():
    sol = solve_cycle(make_system(R_m=0.0, L=0.3))
    assert sol.unconstrained_optimum.filtration_time == pytest.approx(1200.0, rel=1e-12)


@pytest.mark.parametrize("wash_ratio,washing", [(0.0, "through"), (1.0, "through"), (2.5, "simple")])
@pytest.mark.parametrize("R_m", [0.0, 5e10, 2e12])
def test_optimum_agrees_with_brute_force_scipy_to_1e_6(wash_ratio, washing, R_m):
    system = make_system(R_m=R_m, wash_ratio=wash_ratio, washing=washing, L=0.5)
    Q, _, _ = brute_force_throughput(system)
    V_star = solve_cycle(system).unconstrained_optimum.filtrate_volume
    res = minimize_scalar(lambda V: -Q(V), bounds=(1e-9, 100 * V_star), method="bounded",
                          options={"xatol": 1e-12 * V_star, "maxiter": 2000})
    assert res.x == pytest.approx(V_star, rel=1e-6)
    assert Q(V_star) >= -res.fun * (1 - 1e-12)


def test_numeric_optimum_matches_closed_form_to_1e_6():
    # The general path (used by feed modes without a closed form) against the closed form.
    system = make_system(wash_ratio=0.7, L=0.5)
    Q, _, _ = brute_force_throughput(system)
    closed = solve_cycle(system).unconstrained_optimum.filtrate_volume
    assert numeric_optimum_volume(Q, 0.01) == pytest.approx(closed, rel=1e-6)


@pytest.mark.parametrize("area", [5.0, 50.0, 400.0])
def test_without_medium_fill_time_is_independent_of_filter_area(area):
    # With B = 0, t = K_p V^2/2 and V_full = A L/(2 v), K_p = mu alpha c/(A^2 dP), so
    # t_full = mu alpha c L^2/(8 v^2 dP): no A in it (derived here from Ruth's equation).
    ref = solve_cycle(make_system(R_m=0.0, area=50.0)).chambers_full.filtration_time
    assert solve_cycle(make_system(R_m=0.0, area=area)).chambers_full.filtration_time == pytest.approx(ref, rel=1e-12)


def test_without_medium_fill_time_scales_with_thickness_squared():
    t1 = solve_cycle(make_system(R_m=0.0, L=0.025)).chambers_full.filtration_time
    t2 = solve_cycle(make_system(R_m=0.0, L=0.05)).chambers_full.filtration_time
    assert t2 == pytest.approx(4 * t1, rel=1e-12)


@pytest.mark.reference
def test_optimum_frame_thickness_coulson_richardson_example_7_2():
    # Coulson & Richardson Vol. 2 (5th ed.), Example 7.2: whiting, 100 kg per m^3 water,
    # solids 3000 kg/m^3, porosity 0.4, mu = 1 mPa*s, 1000 kN/m^2, cloth neglected,
    # r = 8.25e13 m^-2 per unit cake volume (alpha c = r v), downtime 900 s.
    # Printed optimum frame thickness 69.7 mm; 70.4 mm with v = 0.0568 used consistently.
    eps, rho_s, rho_l = 0.4, 3000.0, 1000.0
    m = sb.wet_to_dry_from_porosity(eps, rho_s, rho_l)
    c = sb.solids_per_filtrate_from_mass_fraction(100 / 1100, m, rho_l)
    v = sb.cake_volume_ratio(c, eps, rho_s)
    alpha = 8.25e13 * v / c
    f = Filtration(c, v, m, 1e-3, alpha, 1e6, 0.0, 0.0)
    system = PressSystem(f, Press(10.0, 0.05), ConstantPressure(1e6), CycleSettings(900.0))
    sol = solve_cycle(system)
    assert sol.matched_chamber_thickness == pytest.approx(0.0704, abs=1e-4)
    assert sol.matched_chamber_thickness == pytest.approx(0.0697, rel=0.015)
    # and at that thickness the chambers fill exactly when filtration time equals downtime
    full = solve_cycle(PressSystem(f, Press(10.0, sol.matched_chamber_thickness), system.feed, system.cycle))
    assert full.chambers_full.filtration_time == pytest.approx(900.0, rel=1e-9)


def test_best_cycle_is_capped_where_the_chambers_fill():
    thin = solve_cycle(make_system(L=0.01))
    assert thin.best.limited_by == "chambers_full"
    assert thin.best == thin.chambers_full
    assert thin.best.chamber_fill == pytest.approx(1.0)
    assert thin.throughput_gain_unconstrained > 0
    thick = solve_cycle(make_system(L=0.3))
    assert thick.best.limited_by == "optimum"
    assert thick.best == thick.unconstrained_optimum
    assert thick.throughput_gain_unconstrained == 0.0


def test_fill_fraction_stops_the_press_early():
    full = solve_cycle(make_system(L=0.01, fill=1.0)).chambers_full
    part = solve_cycle(make_system(L=0.01, fill=0.8)).chambers_full
    assert part.filtrate_volume == pytest.approx(0.8 * full.filtrate_volume)
    assert part.chamber_fill == pytest.approx(0.8)


def test_thickness_comparison_rises_until_the_matched_thickness_then_stays():
    system = make_system()
    L_match = solve_cycle(system).matched_chamber_thickness
    Ls = np.array([0.3, 0.6, 0.9, 1.2, 1.5]) * L_match
    rows = compare_thicknesses(system, Ls)
    Q = [sol.best.filtrate_throughput for _, sol in rows]
    assert Q[0] < Q[1] < Q[2] < Q[3]
    assert Q[3] == pytest.approx(Q[4], rel=1e-12)
    assert [sol.best.limited_by for _, sol in rows] == ["chambers_full"] * 3 + ["optimum"] * 2


def test_low_chamber_fill_at_the_optimum_gives_a_warning():
    sol = solve_cycle(make_system(L=0.5))
    assert sol.best.chamber_fill < 0.5
    assert any("partly filled" in w for w in sol.warnings)


def test_a_partly_filled_through_wash_says_what_filling_costs():
    # a plant-engineer check: the warning told the engineer to fill the chambers without the
    # figure; it now gives the chambers-full cycle's throughput as a share of the best's, the
    # same cycle the results show beside it (also per thickness of a comparison)
    system = make_system(L=0.5, wash_ratio=0.5)
    sol = solve_cycle(system)
    assert sol.best.chamber_fill < 0.95 and sol.best.wash_volume > 0.0
    share = sol.chambers_full.filtrate_throughput / sol.best.filtrate_throughput
    assert 0.0 < share < 1.0
    (warning,) = [w for w in sol.warnings if w.startswith("Through-washing")]
    assert f"the chambers-full cycle gives {100 * share:.0f} % of this cycle's throughput" in warning
    ((_, row),) = compare_thicknesses(system, np.array([0.5]))
    assert any(f"gives {100 * share:.0f} %" in w for w in row.warnings)
    simple = solve_cycle(make_system(L=0.5, wash_ratio=0.5, washing="simple"))
    assert not any(w.startswith("Through-washing") for w in simple.warnings)


def test_zero_downtime_is_refused():
    with pytest.raises(SolverInputError) as err:
        CycleSettings(0.0)
    assert err.value.parameter == "downtime"


def test_unknown_washing_is_refused():
    with pytest.raises(SolverInputError):
        CycleSettings(600.0, 1.0, "sideways")


log_uniform = lambda lo, hi: st.floats(min_value=math.log(lo), max_value=math.log(hi)).map(math.exp)  # noqa: E731


@settings(max_examples=150, deadline=None)
@given(
    alpha=log_uniform(1e8, 1e15), R_m=st.one_of(st.just(0.0), log_uniform(1e8, 1e13)),
    area=log_uniform(0.1, 2000), L=log_uniform(0.005, 0.3), dP=log_uniform(1e4, 3e6),
    t_d=log_uniform(10, 2e4), wash_ratio=st.floats(0, 5), s=st.floats(0, 0.95),
    mu=log_uniform(2e-4, 0.5), c=log_uniform(1, 5000), v=log_uniform(1e-3, 3),
)
def test_random_cases_are_finite_and_best_beats_every_feasible_volume(
    alpha, R_m, area, L, dP, t_d, wash_ratio, s, mu, c, v
):
    system = make_system(alpha=alpha, R_m=R_m, area=area, L=L, dP=dP, t_d=t_d,
                     wash_ratio=wash_ratio, s=s, mu=mu, c=c, v=v)
    sol = solve_cycle(system)
    for r in (sol.best, sol.unconstrained_optimum, sol.chambers_full):
        for value in r.__dict__.values():
            if isinstance(value, float):
                assert math.isfinite(value)
    Q, _, _ = brute_force_throughput(system)
    grid = np.linspace(1e-6, 1.0, 400) * sol.chambers_full_volume
    assert sol.best.filtrate_throughput >= Q(grid).max() * (1 - 1e-9)


def test_washing_by_cake_pore_volumes_equals_the_filtrate_basis_scaled():
    # pore volume per filtrate volume = porosity x v, so r pore volumes = r eps v filtrate volumes
    eps, v = 0.55, 0.15
    base = make_system(v=v, L=0.3)
    f = base.filtration.__class__(**{**base.filtration.__dict__, "porosity": eps})
    pores = PressSystem(f, base.press, base.feed, CycleSettings(1200.0, 3.0, "through", wash_basis="cake_pores"))
    filt = PressSystem(f, base.press, base.feed, CycleSettings(1200.0, 3.0 * eps * v, "through"))
    a, b = solve_cycle(pores).best, solve_cycle(filt).best
    assert a.wash_time == pytest.approx(b.wash_time, rel=1e-12)
    assert a.wash_volume == pytest.approx(3.0 * eps * v * a.filtrate_volume, rel=1e-12)


def test_washing_by_pore_volumes_needs_the_porosity():
    base = make_system()
    system = PressSystem(base.filtration, base.press, base.feed, CycleSettings(1200.0, 2.0, wash_basis="cake_pores"))
    with pytest.raises(SolverInputError, match="porosity"):
        solve_cycle(system)


def _same_solution(a, b):
    """Two CycleSolutions agree in every figure (1e-12 relative) and every word."""
    from dataclasses import fields

    for part in ("best", "unconstrained_optimum", "chambers_full"):
        x, y = getattr(a, part), getattr(b, part)
        for fld in fields(x):
            u, w = getattr(x, fld.name), getattr(y, fld.name)
            if isinstance(u, float):
                assert w == pytest.approx(u, rel=1e-12, abs=1e-300), (part, fld.name)
            else:
                assert u == w, (part, fld.name)
    assert a.at_end.end_reason == b.at_end.end_reason
    assert a.at_end.cycle.filtrate_volume == pytest.approx(b.at_end.cycle.filtrate_volume, rel=1e-12)
    assert a.at_end.throughput_ratio_to_best == pytest.approx(b.at_end.throughput_ratio_to_best, rel=1e-12)
    assert a.chambers_full_volume == pytest.approx(b.chambers_full_volume, rel=1e-12)
    assert a.warnings == b.warnings


@pytest.mark.parametrize("feed_kind", ["constant_pressure", "pump", "steps"])
@pytest.mark.parametrize("end", [None, ("time", 1500.0), ("flow_fraction", 0.2), ("chambers_full", None)])
def test_the_comparison_at_once_equals_one_solve_per_thickness(feed_kind, end):
    # compare_thicknesses solves every thickness in one go; each must be exactly the cycle a
    # press of that thickness alone gives (solve_cycle, one thickness at a time) on the same
    # filtration curve (a tabulated curve built for another span differs in the 8th digit)
    from server.solver import EndCriterion, PressureSteps, PumpCurve, cycle_family_for

    base = make_system(wash_ratio=0.5, s=0.3)
    if feed_kind == "pump":
        q = np.array([0.0, 20.0, 40.0, 60.0]) / 3600
        feed = PumpCurve(tuple(zip(q, np.array([8.0, 7.0, 5.0, 2.0]) * 1e5)))
    elif feed_kind == "steps":
        feed = PressureSteps(((1e5, 600.0), (3e5, 900.0), (7e5, 1e6)))
    else:
        feed = base.feed
    system = PressSystem(base.filtration, base.press, feed, base.cycle)
    criterion = EndCriterion() if end is None else (
        EndCriterion(end[0]) if end[1] is None else EndCriterion(**{"criterion": end[0].split("_")[0], end[0]: end[1]}))
    L_match = solve_cycle(system).matched_chamber_thickness
    # (and the press's own thickness, whose row the API's solve takes from solve_cycle)
    Ls = [0.25 * L_match, 0.7 * L_match, L_match, 1.6 * L_match, 0.012, 0.05, system.press.chamber_thickness]
    family = cycle_family_for(system, Ls)
    for L, sol in compare_thicknesses(system, Ls, criterion, family):
        alone = solve_cycle(PressSystem(system.filtration, system.press.with_thickness(L), feed, system.cycle),
                            criterion, family)
        _same_solution(sol, alone)



@pytest.mark.parametrize("feed_kind", ["constant_pressure", "incompressible", "pump", "steps", "filling", "squeeze",
                                       "squeeze_free"])
def test_the_rows_a_comparison_shows_are_its_best_and_chambers_full_cycles(feed_kind):
    # thickness_rows (what the API's thickness_comparison shows) shares the closed-form
    # optimum's cycle between thicknesses (issue 12): each row must be exactly the best and
    # chambers-full cycles of compare_thicknesses, field for field
    from dataclasses import replace

    from server.solver import PressureSteps, PumpCurve, cycle_family_for, thickness_rows

    base = make_system(wash_ratio=0.5, s=0.0 if feed_kind == "incompressible" else 0.3)
    feed, cycle = base.feed, base.cycle
    if feed_kind == "pump":
        q = np.array([0.0, 20.0, 40.0, 60.0]) / 3600
        feed = PumpCurve(tuple(zip(q, np.array([8.0, 7.0, 5.0, 2.0]) * 1e5)))
    elif feed_kind == "steps":
        feed = PressureSteps(((1e5, 600.0), (3e5, 900.0), (7e5, 1e6)))
    elif feed_kind == "filling":
        cycle = replace(cycle, fill_time=300.0)
    elif feed_kind.startswith("squeeze"):  # stages after filtration (a membrane squeeze, its time given or free)
        from server.solver.expression import Squeeze
        from server.solver.stages import Specs

        squeeze = Squeeze(pressure=1.5e6, consolidation_coefficient=2e-7, final_void_ratio=0.55,
                          time=None if feed_kind == "squeeze_free" else 300.0)
        cycle = replace(cycle, squeeze=squeeze, specs=Specs(max_moisture=0.34) if feed_kind == "squeeze_free" else None)
        base = replace(base, filtration=replace(base.filtration, porosity=0.5))
    system = PressSystem(base.filtration, base.press, feed, cycle)
    L_match = solve_cycle(system).matched_chamber_thickness
    # thicknesses below, at and above the optimum's match: the best is the optimum or full chambers
    # (and the press's own thickness, whose row the API's solve takes from solve_cycle)
    Ls = [0.25 * L_match, 0.7 * L_match, L_match, 1.6 * L_match, 0.012, 0.05, system.press.chamber_thickness]
    family = cycle_family_for(system, Ls)
    rows = thickness_rows(system, Ls, family)
    full = compare_thicknesses(system, Ls, family=family)
    assert [r[0] for r in rows] == [L for L, _ in full] == Ls
    # given the optimum solve_cycle found (as the API's solve passes it), the same rows
    sol = solve_cycle(system, None, family)
    assert thickness_rows(system, Ls, family, sol.unconstrained_optimum) == rows
    # and given its best and chambers-full cycles too: the own thickness's row is those cycles
    assert thickness_rows(system, Ls, family, sol.unconstrained_optimum, (sol.best, sol.chambers_full)) == rows
    kinds = set()
    for (_, best, chambers_full), (_, sol) in zip(rows, full, strict=True):
        assert best == sol.best and chambers_full == sol.chambers_full  # every field, exactly
        kinds.add(best.limited_by)
    assert kinds == {"optimum", "chambers_full"}  # both branches were taken

def test_a_cycle_result_built_from_its_values_is_the_dataclass_built_by_its_constructor():
    # cycle_result skips the frozen dataclass's __init__ (issue 12): the same object, fields in order
    from dataclasses import fields

    from server.solver.cycle import CycleResult, CycleSettings, cycle_family_for, cycle_result
    from server.solver.feeds import ConstantPressure, Filtration
    from server.solver.press import Press

    system = PressSystem(Filtration(150.0, 0.06, 2.6, 0.6e-3, 3e11, 5e5, 0.0, 1.5e11), Press(68.0, 0.025),
                         ConstantPressure(6e5), CycleSettings(2400.0, 1.0, fill_time=120.0))
    sol = solve_cycle(system)
    family = cycle_family_for(system)
    arrays = family.results(system.press, np.array([sol.best.filtrate_volume, 1.0]), np.array([0.025, 0.04]), "optimum")
    for made in (sol.best, sol.unconstrained_optimum, sol.chambers_full, *arrays):
        built = CycleResult(*(getattr(made, f.name) for f in fields(CycleResult)))
        assert made == built and list(made.__dict__.items()) == list(built.__dict__.items())
        assert [type(x) for x in made.__dict__.values()] == [type(x) for x in built.__dict__.values()]
    values = tuple(range(len(fields(CycleResult))))
    assert cycle_result(values) == CycleResult(*values)
    with pytest.raises(ValueError):
        cycle_result(values[:-1])


def test_a_press_at_another_thickness_is_the_press_built_with_it():
    # Press.with_thickness copies the fields (issue 12): the same object as the constructor's,
    # the original untouched, and a thickness the constructor refuses refused the same way
    from server.solver import Press, SolverInputError

    p = Press(50.0, 0.04, 0.9)
    q = p.with_thickness(0.05)
    assert q == Press(50.0, 0.05, 0.9) and hash(q) == hash(Press(50.0, 0.05, 0.9))
    assert q.chamber_volume == Press(50.0, 0.05, 0.9).chamber_volume and p.chamber_thickness == 0.04
    for bad in (0.0, -0.01, math.nan):
        with pytest.raises(SolverInputError, match="chamber_thickness"):
            p.with_thickness(bad)


@pytest.mark.parametrize("s", [0.0, 0.3])
@pytest.mark.parametrize("basis", ["total", "cake"])
def test_filtration_ended_where_a_step_starts_ends_on_the_step_in_progress(s, basis):
    # review finding: an end time on a step's start gave the next step's pressure or the
    # current one's depending on the last bit of rounding; the step in progress (ending
    # there) is the final one, whichever way the time is rounded
    from dataclasses import replace

    from server.solver import EndCriterion, PressureSteps

    base = make_system(wash_ratio=0.5, s=s)
    system = PressSystem(replace(base.filtration, pressure_basis=basis), replace(base.press, chamber_thickness=0.2),
                         PressureSteps(((2e5, 300.0), (4e5, 600.0), (7e5, 1e5))), base.cycle)
    for t in (900.0, 900.0 * (1 + 2e-16), 900.0 * (1 - 2e-16), 899.9999999999999, 900.0000000000001):
        end = solve_cycle(system, EndCriterion("time", time=t)).at_end.cycle
        assert end.final_pressure == 4e5, t
        assert end.filtration_time == pytest.approx(900.0, rel=1e-12)
    just_after = solve_cycle(system, EndCriterion("time", time=900.01)).at_end.cycle
    assert just_after.final_pressure == 7e5  # past the start: the next step
