"""The held-pressure table of a power-law cake on the cake pressure basis (feeds.held_pressure_nodes,
HeldPressureCurve): nodes exactly on the curve, without an iteration to convergence.

Every oracle is constructed here, independently of the solver: the cake's and the cloth's Darcy
laws in series solved by scipy's brentq at each volume, t(V) by scipy.integrate.quad of 1/q, V(t)
by scipy.integrate.solve_ivp of dV/dt = q(V), and the throughput's peak by a dense scan.
"""

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp
from scipy.optimize import brentq

from server.solver.curves import TabulatedCurve, volume_grid
from server.solver.feeds import (
    Filtration,
    HeldPressureCurve,
    held_pressure_curve,
    held_pressure_nodes,
)

MU, C, A, P_REF, P = 1e-3, 60.0, 10.0, 3e5, 7e5

# (s, alpha_ref [m/kg], R_m [1/m], V_max [m^3]): V_0 = A R_m / (alpha(P) c) from about V_max/1e10
# (the cloth's share next to zero at the end) to far beyond V_max (the cake's share small throughout)
CASES = [
    (0.05, 2e11, 5e11, 2.5),
    (0.3, 2e11, 5e11, 2.5),
    (0.6, 2e11, 5e11, 2.5),
    (0.9, 2e11, 5e11, 2.5),
    (0.99, 2e11, 5e11, 2.5),
    (0.999, 2e11, 5e11, 2.5),
    (0.6, 2e13, 1e9, 40.0),
    (0.5, 1e9, 1e13, 0.5),
    (0.6, 5e14, 1e4, 100.0),
]


def filtration(s, alpha_ref, R_m):
    return Filtration(solids_per_filtrate=C, cake_volume_ratio=0.01, wet_to_dry_ratio=2.0, viscosity=MU,
                      resistance_ref=alpha_ref, reference_pressure=P_REF, compressibility=s,
                      medium_resistance=R_m, pressure_basis="cake")


def exact_reciprocal_rate(f, V):
    """dt/dV at volume V [s/m^3] from the rate equation itself (constructed here):
    the cake passes q = dp_c A^2 / (mu alpha(dp_c) c V), the cloth q = (P - dp_c) A / (mu R_m),
    alpha(p) = alpha_ref (p/p_ref)^s. brentq on the smaller of the two pressures, so that
    neither share loses digits."""
    if V == 0.0:
        return MU * f.medium_resistance / (A * P)

    def alpha(p):
        return f.resistance_ref * (p / P_REF) ** f.compressibility

    def cloth_minus_cake(dp_c):
        # (P - dp_c) A / (mu R_m) - dp_c A^2 / (mu alpha(dp_c) c V), times mu R_m alpha(dp_c) c V
        # / (A dp_c^s) > 0: no division, and positive at dp_c = 0 (alpha(0) = 0)
        return ((P - dp_c) * f.resistance_ref * P_REF ** -f.compressibility * C * V
                - f.medium_resistance * A * dp_c ** (1.0 - f.compressibility))

    if cloth_minus_cake(1e-300) <= 0.0:  # the cake's pressure below 1e-300 Pa: no cake term
        return MU * f.medium_resistance / (A * P)
    # where the cake takes half the drop: below it the cake's pressure is the small one
    if cloth_minus_cake(0.5 * P) <= 0.0:
        # on ln dp_c: the root may lie hundreds of decades below P (s near 1, a thin cake)
        dp_c = np.exp(brentq(lambda y: cloth_minus_cake(np.exp(y)), np.log(1e-300), np.log(0.5 * P),
                             xtol=1e-15, rtol=1e-15, maxiter=400))
    else:
        p_m = brentq(lambda p_m: cloth_minus_cake(P - p_m), 0.0, 0.5 * P, xtol=1e-300, rtol=1e-15, maxiter=400)
        dp_c = P - p_m
    return MU * (alpha(dp_c) * C * V / A + f.medium_resistance) / (A * P)


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES)
def test_every_node_is_on_the_curve_of_the_implicit_rate_equation(s, alpha_ref, R_m, V_max):
    # exact solution constructed here: brentq of the cake and cloth in series at each node's volume
    f = filtration(s, alpha_ref, R_m)
    curve = held_pressure_curve(f, A, P, V_max)
    picks = np.unique(np.r_[np.arange(0, curve.V.size, 7), curve.V.size - 1])
    exact = np.array([exact_reciprocal_rate(f, v) for v in curve.V[picks]])
    # largest difference seen over every node of every case: 1.6e-15 (relative)
    np.testing.assert_allclose(curve.r[picks], exact, rtol=2e-13, atol=0.0)


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES)
def test_nodes_rise_from_zero_past_the_volume_asked_close_to_the_usual_grid(s, alpha_ref, R_m, V_max):
    f = filtration(s, alpha_ref, R_m)
    curve = held_pressure_curve(f, A, P, V_max)
    V, r = curve.V, curve.r
    assert V[0] == 0.0
    assert r[0] == MU * R_m / (A * P)  # no cake: the cloth takes the whole drop (psi = 1)
    assert np.all(np.diff(V) > 0.0)
    assert np.all(np.isfinite(r)) and np.all(np.diff(r) >= 0.0)
    assert V[-1] >= V_max
    grid = volume_grid(V_max)
    assert V.size == grid.size
    # each node at or a little beyond its grid volume (Newton's method from above), and no
    # segment much longer than the grid's: the table is as dense as the usual grid
    ratio = V[1:] / grid[1:]
    assert np.all(ratio >= 1.0 - 1e-12)
    assert np.max(ratio) <= 1.02
    assert np.max(np.diff(V) / np.diff(grid)) <= 1.1


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES)
def test_the_newton_share_of_the_solver_agrees_at_the_nodes(s, alpha_ref, R_m, V_max):
    # the same filtration's resistance_per_rate (its share by Newton's method to convergence)
    f = filtration(s, alpha_ref, R_m)
    curve = held_pressure_curve(f, A, P, V_max)
    # largest difference seen: 5.1e-14 (relative, s = 0.999: that Newton's method stops within
    # 1e-15 of x, and phi = x^p magnifies it p = 1000 times; 5.2e-15 at s = 0.99)
    np.testing.assert_allclose(f.resistance_per_rate(P, curve.V, A), curve.r, rtol=1e-13, atol=0.0)


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES[:8])
def test_time_at_the_nodes_matches_the_quadrature_of_the_exact_rate(s, alpha_ref, R_m, V_max):
    # exact solution constructed here: scipy quad of dt/dV (brentq at each V) between checkpoints
    f = filtration(s, alpha_ref, R_m)
    curve = held_pressure_curve(f, A, P, V_max)
    checkpoints = curve.V[[0, 400, 1000, 1400, 1800, curve.V.size - 1]]
    pieces = [quad(lambda v: exact_reciprocal_rate(f, v), a, b, epsabs=0.0, epsrel=1e-13, limit=200)[0]
              for a, b in zip(checkpoints[:-1], checkpoints[1:])]
    exact = np.cumsum(pieces)
    # the table integrates a piecewise-linear 1/Q between exact nodes: a convex 1/Q, so a little
    # above the truth. Largest difference seen: 2.7e-6 (relative; s = 0.99, at node 400), the
    # same as the table on the usual grid with nodes by Newton's method to convergence
    table = curve.time(checkpoints[1:])
    assert np.all(table >= exact * (1.0 - 1e-12))
    np.testing.assert_allclose(table, exact, rtol=4e-6, atol=0.0)


def test_the_volume_at_a_time_matches_the_ode_of_the_rate_equation():
    # exact solution constructed here: solve_ivp of dV/dt = q(V), q from brentq at each step
    f = filtration(0.6, 2e11, 5e11)
    curve = held_pressure_curve(f, A, P, 6.0)  # the table (ConstantPressure's closed form: test_cake_basis_exact.py)
    times = np.array([1.0, 30.0, 300.0, 1500.0, 4000.0])
    sol = solve_ivp(lambda t, V: [1.0 / exact_reciprocal_rate(f, max(float(V[0]), 0.0))], (0.0, times[-1]),
                    [0.0], t_eval=times, method="DOP853", rtol=1e-12, atol=1e-14)
    assert sol.success
    # largest difference seen: 1.31e-6 (relative, at 30 s; the table on the usual grid with
    # nodes by Newton's method to convergence: 1.30e-6); the table's volume is a little low
    # (its time a little high)
    V = curve.volume(times)
    np.testing.assert_allclose(V, sol.y[0], rtol=2e-6, atol=0.0)
    assert np.all(V <= sol.y[0] * (1.0 + 1e-12))
    assert curve.V_max > sol.y[0][-1]  # the check was made inside the table


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES)
@pytest.mark.parametrize("downtime, wash", [(600.0, 0.0), (1200.0, 0.5), (5.0, 2.0), (1e5, 0.0), (60.0, 0.25)])
def test_the_one_peak_of_a_convex_table_is_the_general_search_and_the_scan(s, alpha_ref, R_m, V_max, downtime, wash):
    # oracles: TabulatedCurve.peak_volumes (every segment) on the same table, and a dense scan of
    # the table's throughput V / (t + a V r + t_d)
    f = filtration(s, alpha_ref, R_m)
    curve = held_pressure_curve(f, A, P, V_max)
    assert curve.convex and curve.has_peak
    fast = curve.peak_volumes(downtime, wash)
    general = TabulatedCurve.peak_volumes(curve, downtime, wash)
    assert fast.size == 1
    # the general search may report a second, equal peak where rounding flattens g
    best_general = general[np.argmax(general / (curve.time(general) + wash * general / curve.rate(general)
                                                + downtime))]
    np.testing.assert_allclose(fast[0], best_general, rtol=1e-12)
    top = max(fast[0] * 4.0, curve.V_max)
    dense = np.linspace(top * 1e-9, top, 400_001)
    throughput = dense / (curve.time(dense) + wash * dense / curve.rate(dense) + downtime)
    i = int(np.argmax(throughput))
    assert dense[max(i - 1, 0)] - 1e-12 * top <= fast[0] <= dense[min(i + 1, dense.size - 1)] + 1e-12 * top
    peak = fast[0] / (curve.time(fast[0]) + wash * fast[0] / curve.rate(fast[0]) + downtime)
    assert peak >= throughput[i] * (1.0 - 1e-14)


def test_a_peak_at_a_node_of_the_table_is_found_there():
    # a convex table whose 1/Q jumps in slope at V = 1 enough for g to turn at the node itself
    V = np.linspace(0.0, 2.0, 201)
    r = np.where(V <= 1.0, 1.0 + 0.1 * V, 1.1 + 50.0 * (V - 1.0))
    curve = HeldPressureCurve(V, np.full_like(V, 5e5), reciprocal_rate=r, convex=True)
    # with a wash (a > 0) g falls at the node by a V^2 times the rise of the slope: 1.9 to -23.05
    general = TabulatedCurve.peak_volumes(curve, 2.0, 0.5)
    np.testing.assert_array_equal(curve.peak_volumes(2.0, 0.5), general)
    assert curve.peak_volumes(2.0, 0.5)[0] == 1.0
    # and without one, inside the segment after it, as the general search has it
    np.testing.assert_allclose(curve.peak_volumes(2.0, 0.0), TabulatedCurve.peak_volumes(curve, 2.0, 0.0),
                               rtol=1e-15)


def test_local_laws_keep_the_usual_grid_and_the_general_peak_search():
    from server.solver.locallaws import TillerLeu

    local = TillerLeu(resistance_at_zero_stress=1e11, resistance_exponent=0.6, solidosity_at_zero_stress=0.3,
                      solidosity_exponent=0.1, stress_scale=1e5)
    f = Filtration(solids_per_filtrate=C, cake_volume_ratio=0.01, wet_to_dry_ratio=2.0, viscosity=MU,
                   resistance_ref=2e11, reference_pressure=P_REF, compressibility=0.6, medium_resistance=5e11,
                   pressure_basis="cake", local=local)
    curve = held_pressure_curve(f, A, P, 2.5)
    assert not curve.convex
    np.testing.assert_array_equal(curve.V, volume_grid(2.5))
    np.testing.assert_allclose(curve.r, f.resistance_per_rate(P, curve.V, A), rtol=1e-15)


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES[:3])
def test_scalar_and_array_calls_of_a_table_agree(s, alpha_ref, R_m, V_max):
    curve = held_pressure_curve(filtration(s, alpha_ref, R_m), A, P, V_max)
    volumes = np.concatenate(([-1.0, 0.0], curve.V[[1, 2, 500, 1998]], np.linspace(0.0, 3.0 * V_max, 97)))
    for v in volumes.tolist():
        assert curve.time(v) == curve.time(np.array([v]))[0]
        assert curve.rate(v) == curve.rate(np.array([v]))[0]
        assert curve.pressure_at(v) == P
    np.testing.assert_array_equal(curve.pressure_at(volumes), np.full(volumes.shape, P))
    assert curve.pressure_at(np.float64(0.5)) == P and curve.pressure_at(np.array(0.5)) == P
    # a general table (pressure that changes along it)
    V = np.linspace(0.0, 1.0, 11)
    table = TabulatedCurve(V, 1e5 * (1.0 + V * V), 1.0 / (1.0 + V))
    for v in np.concatenate((V, [-0.5, 0.05, 0.37, 0.999, 1.0, 1.5])).tolist():
        assert table.time(v) == table.time(np.array([v]))[0]
        assert table.rate(v) == table.rate(np.array([v]))[0]
        assert table.pressure_at(v) == pytest.approx(float(table.pressure_at(np.array([v]))[0]), rel=1e-15)


@pytest.mark.parametrize("s, alpha_ref, R_m, V_max", CASES)
def test_the_safe_nodes_by_newton_alone_are_as_exact(s, alpha_ref, R_m, V_max):
    # the path taken should the quick nodes come out of order (not seen): Newton's method alone
    # from x = min(1, 1/k); checked against brentq as above
    f = filtration(s, alpha_ref, R_m)
    V, r = held_pressure_nodes(f, A, P, V_max, safe=True)
    assert V[0] == 0.0 and np.all(np.diff(V) > 0.0) and V[-1] >= V_max and V.size == volume_grid(V_max).size
    picks = np.arange(1, V.size, 53)
    exact = np.array([exact_reciprocal_rate(f, v) for v in V[picks]])
    np.testing.assert_allclose(r[picks], exact, rtol=2e-13, atol=0.0)
    assert np.max(V[1:] / volume_grid(V_max)[1:]) <= 1.001
