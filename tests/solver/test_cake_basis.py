"""The cake pressure basis (Tiller) and the Tiller–Leu cake averages, against independent
integrations (scipy.integrate.solve_ivp, brentq, quad) and closed forms. Derived here."""

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp
from scipy.optimize import brentq

from server.solver import SolverInputError
from server.solver.feeds import ConstantPressure, ConstantRate, Filtration, PressureSteps, PumpCurve
from server.solver.locallaws import TillerLeu, fit_tiller_leu

MU, C, A = 1e-3, 60.0, 10.0
ALPHA_REF, P_REF, S, R_M = 2e11, 3e5, 0.6, 5e11


def filtration(basis="cake", s=S, R_m=R_M, local=None):
    return Filtration(solids_per_filtrate=C, cake_volume_ratio=0.01, wet_to_dry_ratio=2.0, viscosity=MU,
                      resistance_ref=ALPHA_REF, reference_pressure=P_REF, compressibility=s,
                      medium_resistance=R_m, pressure_basis=basis, local=local)


def alpha_of(p):
    return ALPHA_REF * (p / P_REF) ** S


def cake_basis_flow(P, V):
    """q at total pressure P and volume V: dp_c from dp_c + mu R_m q(dp_c)/A = P by brentq."""
    if V == 0.0:
        return P * A / (MU * R_M)
    q_of = lambda x: 0.0 if x == 0.0 else x * A * A / (MU * alpha_of(x) * C * V)  # noqa: E731 (the cake's Darcy law)
    x = brentq(lambda x: x + MU * R_M * q_of(x) / A - P, 0.0, P, xtol=1e-300, rtol=1e-14)
    return q_of(x)


def ode_time(volumes, supply=None, P_cap=None):
    """t(V) by solve_ivp of dt/dV = 1/q; q where the supply (flow at a pressure) meets the cake."""
    def q_at(V):
        if supply is None:
            return cake_basis_flow(P_cap, V)
        # the pressure at which the cake takes what the supply gives, at most the cap
        if cake_basis_flow(P_cap, V) <= supply(P_cap):
            return cake_basis_flow(P_cap, V)
        P = brentq(lambda p: cake_basis_flow(p, V) - supply(p), 1.0, P_cap, xtol=1e-6, rtol=1e-13)
        return cake_basis_flow(P, V)

    sol = solve_ivp(lambda V, t: [1.0 / q_at(V)], (0.0, float(volumes[-1])), [0.0], t_eval=volumes,
                    rtol=1e-10, atol=1e-9, method="DOP853")
    return sol.y[0]


VOLUMES = np.array([0.05, 0.2, 0.5, 1.0, 2.0])


def test_constant_pressure_on_the_cake_basis_matches_the_ode():
    curve = ConstantPressure(7e5).curve(filtration(), A, 2.5)
    exact = ode_time(VOLUMES, P_cap=7e5)
    np.testing.assert_allclose(curve.time(VOLUMES), exact, rtol=1e-4)
    # and the total basis would be quicker here: the early cake is looser than alpha(dP) says
    total = ConstantPressure(7e5).curve(filtration("total"), A, 2.5)
    assert np.all(total.time(VOLUMES) > exact * 1.01)


def test_constant_rate_then_pressure_on_the_cake_basis_matches_the_ode():
    Q0 = 4e-3
    curve = ConstantRate(Q0, 7e5).curve(filtration(), A, 2.5)
    exact = ode_time(VOLUMES, supply=lambda p: Q0, P_cap=7e5)
    np.testing.assert_allclose(curve.time(VOLUMES), exact, rtol=1e-4)


def test_pump_curve_on_the_cake_basis_matches_the_ode():
    # two points: the monotone cubic between them is the straight line, so the oracle can use it
    q_max, p_top, p_low = 8e-3, 8e5, 1e5
    pump = PumpCurve(((0.0, p_top), (q_max, p_low)))
    supply = lambda p: q_max if p <= p_low else q_max * (p_top - p) / (p_top - p_low)  # noqa: E731
    curve = pump.curve(filtration(), A, 2.5)
    exact = ode_time(VOLUMES, supply=supply, P_cap=p_top)
    np.testing.assert_allclose(curve.time(VOLUMES), exact, rtol=1e-3)


def test_pressure_steps_on_the_cake_basis_follow_each_held_pressure():
    steps = PressureSteps(((3e5, 600.0), (7e5, 1e4)))
    curve = steps.curve(filtration(), A, 3.0)
    V1 = float(curve.volume(600.0))
    assert float(ode_time(np.array([V1]), P_cap=3e5)[0]) == pytest.approx(600.0, rel=1e-4)
    # after the step: t(V) - t(V1) is the 7 bar curve's time from V1 to V, on the same table
    # as each step's (feeds.held_pressure_curve; V1 * 3 is past it, where both continue their
    # last segment; the closed-form ConstantPressure curve: tests/solver/test_cake_basis_exact.py)
    from server.solver.feeds import held_pressure_curve

    held = held_pressure_curve(filtration(), A, 7e5, 3.0)
    V = np.array([V1 * 1.5, V1 * 3])
    np.testing.assert_allclose(curve.time(V) - 600.0, held.time(V) - held.time(V1), rtol=1e-9)


@pytest.mark.parametrize("s,R_m", [(0.0, R_M), (S, 0.0)])
def test_cake_basis_is_the_total_basis_without_compressibility_or_cloth(s, R_m):
    a = ConstantPressure(5e5).curve(filtration("cake", s, R_m), A, 2.0)
    b = ConstantPressure(5e5).curve(filtration("total", s, R_m), A, 2.0)
    np.testing.assert_allclose(a.time(VOLUMES), b.time(VOLUMES), rtol=1e-12)


def integral(f, upper):
    """quad over geometric pieces (the integrands change scale over decades of stress)."""
    edges = np.concatenate(([0.0], np.geomspace(min(1.0, upper / 10), upper, 30)))
    return sum(quad(f, a, b, epsrel=1e-13, limit=200)[0] for a, b in zip(edges, edges[1:]))


def test_tiller_leu_average_resistance_closed_form_and_quadrature():
    law = TillerLeu(1e11, 0.5, 0.2, 0.1, 1e4)
    # closed form by hand: alpha_av = alpha_0 (1 - n) X / ((1 + X)^(1 - n) - 1), X = 50
    by_hand = 1e11 * 0.5 * 50 / (51**0.5 - 1)
    assert law.average_resistance(5e5) == pytest.approx(by_hand, rel=1e-12)
    assert law.average_resistance(5e5) == pytest.approx(4.07e11, rel=1e-3)
    for dp in (1e2, 3e4, 5e5, 2e7):
        w = integral(lambda p: 1.0 / law.local_resistance(p), dp)
        assert law.average_resistance(dp) == pytest.approx(dp / w, rel=1e-10)
        vol = integral(lambda p: 1.0 / (law.local_resistance(p) * law.local_solidosity(p)), dp)
        assert law.average_solidosity(dp) == pytest.approx(w / vol, rel=1e-10)


def test_tiller_leu_with_zero_exponents_is_an_incompressible_cake():
    law = TillerLeu(2e11, 0.0, 0.4, 0.0, 1e4)
    assert law.average_resistance(np.array([1e3, 1e6])) == pytest.approx([2e11, 2e11], rel=1e-12)
    assert law.average_solidosity(7e5) == pytest.approx(0.4, rel=1e-12)
    local = ConstantPressure(5e5).curve(filtration("cake", local=law), A, 2.0)
    plain = ConstantPressure(5e5).curve(
        Filtration(C, 0.01, 2.0, MU, 2e11, P_REF, 0.0, R_M, pressure_basis="cake"), A, 2.0)
    np.testing.assert_allclose(local.time(VOLUMES), plain.time(VOLUMES), rtol=1e-12)


def test_tiller_leu_on_the_cake_basis_matches_the_ode_with_the_local_average():
    law = TillerLeu(1e11, 0.5, 0.2, 0.1, 1e4)
    curve = ConstantPressure(5e5).curve(filtration("cake", local=law), A, 2.0)

    def dtdV(V, _t):
        if V == 0:
            return [MU * R_M / (A * 5e5)]
        x = brentq(lambda x: x * (1 + R_M * A / (law.average_resistance(x) * C * V)) - 5e5, 1e-9, 5e5, rtol=1e-14)
        return [MU * (law.average_resistance(x) * C * V / A + R_M) / (A * 5e5)]

    exact = solve_ivp(dtdV, (0, 2.0), [0.0], t_eval=VOLUMES, rtol=1e-10, atol=1e-9).y[0]
    np.testing.assert_allclose(curve.time(VOLUMES), exact, rtol=1e-4)


def test_tiller_leu_fit_recovers_seeded_synthetic_data():
    # synthetic compression-permeability data from known laws, 2 % log-normal scatter, seeded
    rng = np.random.default_rng(14)
    truth = TillerLeu(5e10, 0.7, 0.25, 0.12, 2e4)
    p = np.geomspace(5e3, 2e6, 12)
    a = truth.local_resistance(p) * np.exp(rng.normal(0, 0.02, p.size))
    e = truth.local_solidosity(p) * np.exp(rng.normal(0, 0.02, p.size))
    fit = fit_tiller_leu(p, a, e)
    for dp in (1e5, 5e5, 1e6):
        assert fit.law.average_resistance(dp) == pytest.approx(truth.average_resistance(dp), rel=0.05)
        assert fit.law.average_solidosity(dp) == pytest.approx(truth.average_solidosity(dp), rel=0.05)
    assert fit.law.resistance_exponent == pytest.approx(0.7, abs=4 * fit.stderrs["resistance_exponent"] + 0.05)


@pytest.mark.parametrize("field,value", [("resistance_exponent", -0.1), ("solidosity_at_zero_stress", 1.0),
                                         ("stress_scale", 0.0), ("solidosity_exponent", 1.0)])
def test_tiller_leu_refuses_values_outside_their_range(field, value):
    args = {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5, "solidosity_at_zero_stress": 0.3,
            "solidosity_exponent": 0.1, "stress_scale": 1e4, field: value}
    with pytest.raises(SolverInputError) as err:
        TillerLeu(**args)
    assert err.value.parameter == field


# --- the optimum of a held-pressure (tabulated) curve, worked out on its table (issue 12) -----

def _scanned_optimum(curve, downtime, a):
    """The optimum the cycle found before HeldPressureCurve.optimum_volume: every peak of the
    throughput of the same table scanned, then refined by a bounded scalar search."""
    from server.solver.cycle import peak_scan

    def throughput(V):
        return V / (curve.time(V) + a * np.asarray(V) / curve.rate(V) + downtime)

    return peak_scan(throughput, 1.0, curve.knots, curve.held_from).V_best, throughput


@pytest.mark.parametrize("P", [1e5, 6e5, 15e5])
@pytest.mark.parametrize("downtime, a", [(600.0, 0.0), (1800.0, 0.4), (7200.0, 4.0)])
def test_the_held_pressure_optimum_on_its_table_is_the_scanned_one(P, downtime, a):
    curve = ConstantPressure(P).curve(filtration(), A, 40.0)
    exact = curve.optimum_volume(downtime, a)
    scanned, throughput = _scanned_optimum(curve, downtime, a)
    # the same peak: the scan, refined from throughput values alone, places a flat maximum to
    # about sqrt(machine epsilon); the throughput there agrees to round-off
    assert exact == pytest.approx(scanned, rel=1e-7)
    assert throughput(exact) >= throughput(scanned) * (1 - 1e-14)
    assert throughput(exact) > throughput(exact * (1 - 1e-6)) and throughput(exact) > throughput(exact * (1 + 1e-6))


def test_the_tabulated_optimum_of_a_straight_line_is_the_closed_form():
    # 1/Q = K V + B tabulated: the optimum is sqrt(t_d / (K (1/2 + a))) (the closed form)
    from server.solver.curves import volume_grid
    from server.solver.feeds import HeldPressureCurve

    K, B, t_d, a = 4e2, 3e3, 1800.0, 0.7
    V = volume_grid(50.0)
    curve = HeldPressureCurve(V, np.full_like(V, 5e5), 1.0 / (K * V + B))
    assert curve.optimum_volume(t_d, a) == pytest.approx(np.sqrt(t_d / (K * (0.5 + a))), rel=1e-12)
    assert curve.pressure == 5e5


def test_a_peak_at_a_kink_of_the_table_is_found_at_the_node():
    # 1/Q steep past V = 2 m³: with a wash (a > 0) the wash time's slope jumps there, and the
    # throughput rises up to the kink and falls after it
    from server.solver.feeds import HeldPressureCurve

    V = np.linspace(0.0, 10.0, 11)
    r = np.where(V <= 2.0, 1.0 + 0.01 * V, 1.02 + 50.0 * (V - 2.0))
    curve = HeldPressureCurve(V, np.full_like(V, 5e5), 1.0 / r)
    scanned, throughput = _scanned_optimum(curve, 100.0, 1.0)
    assert curve.optimum_volume(100.0, 1.0) == 2.0 == pytest.approx(scanned, rel=1e-7)
    no_wash = curve.optimum_volume(100.0, 0.0)  # without a wash the kink is no peak
    assert no_wash > 2.0 and no_wash == pytest.approx(_scanned_optimum(curve, 100.0, 0.0)[0], rel=1e-7)


def test_a_table_without_a_certain_peak_leaves_the_optimum_to_the_scan():
    # 1/Q flat at the end: the throughput may rise for ever; the cycle then scans as before
    from server.solver.feeds import HeldPressureCurve

    V = np.linspace(0.0, 10.0, 11)
    flat = HeldPressureCurve(V, np.full_like(V, 5e5), np.full_like(V, 0.5))
    assert flat.optimum_volume is None
    rising = HeldPressureCurve(V, np.full_like(V, 5e5), 1.0 / (1.0 + V))
    assert rising.optimum_volume is not None


def test_demo_results_on_the_cake_basis_agree_with_the_scanned_optimum(monkeypatch):
    """Every figure of every demo as before the optimum was worked out on the table (held
    pressure on the cake basis, and a pump's table with the wash at the end pressure): the
    optimum's throughput to round-off, and what depends on where the (flat) peak lies to
    the scan's resolution."""
    import json
    from pathlib import Path

    from server.schemas.cycle import CycleRequest
    from server.solve import solve
    from server.solver.curves import TabulatedCurve
    from server.solver.feeds import CakeBasisPressureCurve, HeldPressureCurve

    def numbers(x, path=""):
        if isinstance(x, dict):
            for k, v in x.items():
                yield from numbers(v, f"{path}.{k}")
        elif isinstance(x, list):
            for i, v in enumerate(x):
                yield from numbers(v, f"{path}[{i}]")
        elif isinstance(x, int | float) and not isinstance(x, bool):
            yield path, float(x)

    on_table = 0
    for f in sorted((Path(__file__).resolve().parents[2] / "demo_cases").glob("*.json")):
        request = CycleRequest.model_validate(json.loads(f.read_text())["inputs"])
        new = dict(numbers(json.loads(solve(request).results_json)))
        with monkeypatch.context() as m:
            m.setattr(HeldPressureCurve, "optimum_volume", None)
            m.setattr(CakeBasisPressureCurve, "optimum_volume", None)  # (its closed form: scanned too)
            m.setattr(TabulatedCurve, "has_peak", False)  # every table scanned, as before
            old = dict(numbers(json.loads(solve(request).results_json)))
        assert new.keys() == old.keys()
        for k in new:
            assert new[k] == pytest.approx(old[k], rel=1e-7, abs=1e-300), (f.name, k)
            if k.endswith("_throughput") and k.startswith((".best", ".unconstrained_optimum")):
                assert new[k] == pytest.approx(old[k], rel=1e-12), (f.name, k)
        on_table += new != old
    assert on_table >= 3  # the demos on the cake basis and the pump-fed demo took the new path
