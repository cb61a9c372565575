"""Pump-fed filtration: the supply's exact piecewise-linear inverse, the operating point solved per
segment, the curve t(V) and the thickness comparison, against independent solutions built here."""

from dataclasses import replace

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

from server.solver import (
    ConstantRate,
    CycleFamily,
    CycleSettings,
    EndCriterion,
    Filtration,
    Press,
    PressSystem,
    PumpCurve,
    compare_thicknesses,
    cycle_family_for,
    solve_cycle,
)
from server.solver.curves import GeneralisedInverse, operating_point
from server.solver.locallaws import TillerLeu

MU, C, A, R_M, ALPHA, P_REF = 1.05e-3, 380.0, 100.0, 8e10, 2e12, 5e5

# An invented centrifugal pump (the kaolin demo's): shut-off 8.5 bar, 80 m^3/h at 1.5 bar
KAOLIN = tuple((q / 3600, p * 1e5) for q, p in ((0, 8.5), (20, 8.0), (40, 6.8), (60, 4.6), (80, 1.5)))
# one with flat stretches (jumps of Q(P)) and a flat top, and one starting above zero flow
FLAT = tuple((q / 3600, p * 1e5) for q, p in ((0, 8), (10, 8), (20, 8), (40, 5), (50, 5), (60, 3), (70, 3)))
LIFTED = tuple((q / 3600, p * 1e5) for q, p in ((5, 7.0), (15, 6.4), (30, 5.0), (45, 3.0), (60, 1.0)))


def filtration(s=0.45, R_m=R_M, basis="cake", local=None):
    return Filtration(C, 0.3, 1.4, MU, ALPHA, P_REF, s, R_m, pressure_basis=basis, local=local)


def supply_by_loop(flows, pressures, p):
    """Q(p) of the piecewise-linear inverse, one segment at a time in plain Python (exact solution
    constructed here): the highest flow below the lowest pressure, the lowest above the highest,
    at a jump's pressure the highest of its flows."""
    pts = sorted(zip(pressures, flows), key=lambda x: (x[0], -x[1]))  # along the curve
    if p <= pts[0][0]:
        return pts[0][1]
    for (p0, q0), (p1, q1) in zip(pts, pts[1:]):
        if p0 < p <= p1:
            return q0 + (q1 - q0) * (p - p0) / (p1 - p0)
    return pts[-1][1]


@pytest.mark.parametrize("points", [KAOLIN, FLAT, LIFTED, ((0.0, 5e5), (0.01, 5e5), (0.03, 5e5))])
def test_supply_lookup_is_the_piecewise_linear_inverse_at_every_pressure(points):
    supply = PumpCurve(points).supply_flow
    assert isinstance(supply, GeneralisedInverse)
    rng = np.random.default_rng(3)
    nodes = supply.P
    p = np.concatenate((rng.uniform(0.0, 1e6, 400), nodes[::7], np.nextafter(nodes[::7], 0.0),
                        np.nextafter(nodes[::7], np.inf), [0.0, nodes[0], nodes[-1], 2e6]))
    exact = np.array([supply_by_loop(supply.Q, supply.P, x) for x in p])
    got = supply(p)
    # against the segment-by-segment loop (exact solution constructed here)
    np.testing.assert_allclose(got, exact, rtol=1e-12, atol=1e-18)  # largest seen: 0
    # one pressure at a time (a list bisect) gives the same
    assert [supply(float(x)) for x in p[::13]] == pytest.approx(exact[::13].tolist(), rel=1e-12, abs=1e-18)


@pytest.mark.parametrize("points", [KAOLIN, FLAT, LIFTED])
def test_supply_nodes_are_the_function_itself(points):
    supply = PumpCurve(points).supply_flow
    cap = 7e5
    p, q = supply.nodes(cap)
    assert p[0] == 0.0 and p[-1] == cap and np.all(np.diff(p) >= 0.0) and np.all(np.diff(q) <= 0.0)
    # between consecutive nodes of positive width the function is the straight line through them
    # (exact solution constructed here: the chord's midpoint)
    w = np.diff(p) > 0.0
    mid = 0.5 * (p[:-1] + p[1:])[w]
    line = (0.5 * (q[:-1] + q[1:]))[w]
    np.testing.assert_allclose(supply(mid), line, rtol=1e-12)


def cake_flow_total_basis(P, V, f, area):
    """The flow cake and cloth pass at a pressure drop P after V of filtrate, alpha at P."""
    medium = f.medium_resistance / area
    alpha = float(f.specific_resistance(P))
    return P / (f.viscosity * (alpha * f.solids_per_filtrate * V / area**2 + medium))


def root(fn, lo, hi):
    return brentq(fn, lo, hi, xtol=1e-300, rtol=1e-15, maxiter=1000)


def operating_point_exact(supply, cap, V, f, area):
    """Where the cake meets the supply after V of filtrate (exact solution constructed here with
    brentq): the pressure, and the flow, held at the cap when the cake passes less there.

    On the cake basis the unknown is the cake's own pressure pc: the cake passes
    q(pc) = pc A^2/(mu alpha(pc) c V) and the whole pressure is P = pc + mu R_m q / A (both
    rising with pc; the supply falls with P). On the total basis the unknown is P."""
    mu, medium = f.viscosity, f.medium_resistance / area
    if V == 0.0:  # the clean cloth alone: P = mu R_m Q / A, Q = supply(P)
        if cap <= mu * medium * supply(cap):
            return cap, cap / (mu * medium)
        P = root(lambda x: x - mu * medium * supply(x), 0.0, cap)
        return P, supply(P)
    if f.on_cake_basis:
        def q_of(pc):
            return pc * area**2 / (mu * float(f.specific_resistance(pc)) * f.solids_per_filtrate * V)

        def P_of(pc):
            return pc + mu * medium * q_of(pc)

        pc_cap = root(lambda x: P_of(x) - cap, 1e-300 * cap, cap)
        if q_of(pc_cap) <= supply(cap):
            return cap, q_of(pc_cap)
        pc = root(lambda x: q_of(x) - supply(min(P_of(x), cap)), 1e-300 * cap, pc_cap)
        P, Q = P_of(pc), q_of(pc)
    else:
        if cake_flow_total_basis(cap, V, f, area) <= supply(cap):
            return cap, cake_flow_total_basis(cap, V, f, area)
        P = root(lambda x: cake_flow_total_basis(x, V, f, area) - supply(x), 1e-300, cap)
        Q = cake_flow_total_basis(P, V, f, area)
    # the cake's flow, within the supply's on either side (at a jump of the supply it lies between)
    return P, min(max(Q, supply(P * (1 + 1e-14))), supply(P * (1 - 1e-14)))


VOLUMES = np.concatenate(([0.0], np.geomspace(1e-4, 60.0, 57)))


@pytest.mark.parametrize("basis", ["cake", "total"])
@pytest.mark.parametrize("s", [0.0, 0.45, 0.9])
@pytest.mark.parametrize("R_m", [R_M, 0.0, 3e12, 1e14])  # the last two: the clean cloth takes most, all
@pytest.mark.parametrize("points,cap", [(KAOLIN, 7e5), (KAOLIN, None), (KAOLIN, 1.2e5), (FLAT, 6e5), (LIFTED, None)])
def test_operating_point_matches_brentq_on_the_same_supply(basis, s, R_m, points, cap):
    pump = PumpCurve(points, max_pressure=cap)
    f = filtration(s, R_m, basis)
    supply = pump.supply_flow
    P, Q = operating_point(supply, pump.pressure_cap, VOLUMES, f, A)
    assert P.max() <= pump.pressure_cap
    for i, V in enumerate(VOLUMES):
        if V == 0.0 and R_m == 0.0:
            assert Q[i] == supply(0.0)  # no cake, no cloth: the pump's highest flow
            continue
        P_exact, Q_exact = operating_point_exact(lambda x: supply(float(x)), pump.pressure_cap, float(V), f, A)
        # against brentq on the same supply (exact solution constructed here);
        # the largest differences seen: 4e-15 (P) and 2e-15 (Q), relative
        assert P[i] == pytest.approx(P_exact, rel=1e-12, abs=1e-6), (i, V)
        assert Q[i] == pytest.approx(Q_exact, rel=1e-12), (i, V)


@pytest.mark.parametrize("basis", ["cake", "total"])
def test_operating_point_with_local_laws_matches_brentq(basis):
    law = TillerLeu(1e11, 0.5, 0.2, 0.1, 1e5)
    f = filtration(0.0, R_M, basis, local=law)
    pump = PumpCurve(KAOLIN, max_pressure=7e5)
    supply = pump.supply_flow
    P, Q = operating_point(supply, pump.pressure_cap, VOLUMES[1:], f, A)
    for i, V in enumerate(VOLUMES[1:]):
        P_exact, Q_exact = operating_point_exact(lambda x: supply(float(x)), pump.pressure_cap, float(V), f, A)
        # against brentq (exact solution constructed here); largest seen: 1.3e-14
        assert P[i] == pytest.approx(P_exact, rel=1e-12), (i, V)
        assert Q[i] == pytest.approx(Q_exact, rel=1e-12), (i, V)


def test_constant_rate_operating_point_on_the_cake_basis_matches_brentq():
    feed = ConstantRate(30 / 3600, 6e5)
    f = filtration()
    P, Q = operating_point(feed.supply_flow, feed.pressure_cap, VOLUMES, f, A)
    for i, V in enumerate(VOLUMES):
        P_exact, Q_exact = operating_point_exact(lambda x: feed.flow, feed.pressure_cap, float(V), f, A)
        # against brentq (exact solution constructed here); largest seen: 7e-16
        assert P[i] == pytest.approx(P_exact, rel=1e-12), (i, V)
        assert Q[i] == pytest.approx(Q_exact, rel=1e-12), (i, V)


def pchip_supply(points):
    """Q(P) of the monotone cubic itself, inverted by brentq (no table; exact solution constructed
    here): the highest flow below the curve's lowest pressure."""
    q = np.array([x[0] for x in points])
    p = np.array([x[1] for x in points])
    cubic = PchipInterpolator(q, p)

    def supply(P):
        if P <= p[-1]:
            return q[-1]
        if P >= p[0]:
            return q[0]
        return brentq(lambda x: float(cubic(x)) - P, q[0], q[-1], xtol=1e-300, rtol=1e-15)

    return supply


def ode_curve(points, cap, f, V_end):
    """t(V) by solve_ivp of dt/dV = 1/Q_op(V), Q_op found by brentq against the PCHIP pump
    curve (exact solution constructed here)."""
    supply = pchip_supply(points)

    def rate(V):
        return operating_point_exact(supply, cap, max(V, 0.0), f, A)[1]

    sol = solve_ivp(lambda V, t: [1.0 / rate(V)], (0.0, V_end), [0.0], method="DOP853", rtol=1e-11, atol=1e-9,
                    dense_output=True)
    return lambda V: sol.sol(V)[0], rate


@pytest.mark.parametrize("basis,s", [("cake", 0.45), ("total", 0.45), ("total", 0.0)])
def test_pump_fed_curve_and_best_cycle_match_the_ode_against_the_pump_curve(basis, s):
    f = filtration(s, R_M, basis)
    pump = PumpCurve(KAOLIN, max_pressure=7e5)
    settings = CycleSettings(1500.0, 0.0)
    family = CycleFamily(f, A, pump, settings, 10.0)
    V_end = 2.0 * family.V_star
    time_exact, rate_exact = ode_curve(KAOLIN, 7e5, f, V_end)
    V = np.linspace(0.02, V_end, 40)
    t_exact = time_exact(V)
    # against solve_ivp with brentq on the monotone cubic (exact solution constructed here);
    # the largest differences seen: 2.6e-6 (t) and 5.4e-6 (Q), relative: the supply is the cubic
    # on a dense grid of flows, t(V) a quadrature on a grid of volumes
    np.testing.assert_allclose(family.curve.time(V), t_exact, rtol=2e-5)
    np.testing.assert_allclose(family.curve.rate(V), [rate_exact(v) for v in V], rtol=2e-5)
    # the best cycle: brute force on a grid of the exact throughput V / (t(V) + t_d) (exact
    # solution constructed here)
    grid = np.linspace(0.2 * family.V_star, V_end, 20001)
    throughput = grid / (time_exact(grid) + settings.downtime)
    V_best = grid[int(np.argmax(throughput))]
    assert family.V_star == pytest.approx(V_best, rel=2e-4)  # largest seen: 1e-5 (grid step 9e-5 of V*)
    best = family.throughput(family.V_star)
    assert best == pytest.approx(throughput.max(), rel=1e-6)  # largest seen: 4e-8


@pytest.mark.parametrize("criterion", [EndCriterion(), EndCriterion("flow", flow=3.0 / 3600),
                                       EndCriterion("pressure", pressure=6.5e5), EndCriterion("time", time=1800.0),
                                       EndCriterion("chambers_full")])
@pytest.mark.parametrize("wash_ratio", [0.0, 1.0])
def test_thickness_comparison_gives_each_thickness_its_own_solve(criterion, wash_ratio):
    # the table path works out every cycle in one go: the same cycles as solving each thickness
    # on its own (solve_cycle, one cycle at a time: the reference here)
    system = PressSystem(filtration(), Press(A, 0.03), PumpCurve(KAOLIN, max_pressure=7e5),
                         CycleSettings(1500.0, wash_ratio))
    thicknesses = [0.01, 0.02, 0.025, 0.03, 0.04, 0.06, 0.1]
    family = cycle_family_for(system, thicknesses)
    rows = compare_thicknesses(system, thicknesses, criterion, family)
    for L, sol in rows:
        one = solve_cycle(replace(system, press=system.press.with_thickness(L)), criterion, family, with_curves=False)
        for part in ("best", "unconstrained_optimum", "chambers_full"):
            a, b = getattr(sol, part), getattr(one, part)
            for key, value in b.__dict__.items():
                if isinstance(value, float):
                    assert getattr(a, key) == pytest.approx(value, rel=1e-12, abs=1e-15), (L, part, key)
                else:
                    assert getattr(a, key) == value, (L, part, key)
        assert sol.at_end.end_reason == one.at_end.end_reason
        assert sol.at_end.cycle.filtrate_volume == pytest.approx(one.at_end.cycle.filtrate_volume, rel=1e-12)
        assert sol.at_end.throughput_ratio_to_best == pytest.approx(one.at_end.throughput_ratio_to_best, rel=1e-12)
        assert sol.warnings == [w for w in one.warnings if w in sol.warnings]


@pytest.mark.parametrize("basis,s", [("total", 0.0), ("total", 0.45), ("cake", 0.45), ("cake", 0.9)])
@pytest.mark.parametrize("points,cap", [(KAOLIN, 7e5), (KAOLIN, None), (((1.0, 22026.0), (2.7, 22026.0)), None),
                                        (((0.0, 58695.3627054491), (0.0068135079895900105, 11636.510859349448)), None)])
def test_flow_far_past_the_cap_keeps_its_relative_precision(basis, s, points, cap):
    # Far along the held cap (or a shut-off at the cap) the flow is many decades below the pump's:
    # it must stay positive and exact relative to itself (1/Q is integrated). Found by random
    # inputs: a flat pump curve, a cake of little resistance and volumes up to 1e17 m^3 (the
    # API's property test); a straight pump curve to shut-off (a fuzz of the operating point).
    pump = PumpCurve(points, max_pressure=cap)
    f = filtration(s, R_M, basis)
    V = np.geomspace(1.0, 1e17, 17)
    P, Q = operating_point(pump.supply_flow, pump.pressure_cap, V, f, A)
    assert np.all(Q > 0.0)
    for i, v in enumerate(V):
        # against brentq (exact solution constructed here); largest seen: 6e-16
        P_exact, Q_exact = operating_point_exact(lambda x: pump.supply_flow(float(x)), pump.pressure_cap, float(v), f, A)
        assert P[i] == pytest.approx(P_exact, rel=1e-12), (i, v)
        assert Q[i] == pytest.approx(Q_exact, rel=1e-12), (i, v)
