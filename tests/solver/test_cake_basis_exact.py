"""Constant pressure on the cake pressure basis with a power-law cake in closed form
(cakebasis.CakeBasisPressureCurve, issue 12), against independent oracles: scipy.integrate.quad of
dt/dV = B/psi and solve_ivp of dV/dt = psi/B with the cloth's share psi from brentq, the
classical constant-pressure equation at s = 0, a brute-force grid for the optimum, and the
held-pressure table it replaces. Derived here (the closed form and every oracle)."""

import math

import numpy as np
import pytest
from scipy.integrate import quad, solve_ivp
from scipy.optimize import brentq, minimize_scalar

from server.solver import constant_pressure as cp
from server.solver.feeds import (
    CakeBasisPressureCurve,
    ConstantPressure,
    Filtration,
    PressureSteps,
    held_pressure_curve,
)

P, B = 6e5, 2.5e3  # Pa, s/m^3
COMPRESSIBILITIES = [0.05, 0.3, 0.6, 0.9, 0.99, 0.999]
#: V_0 as a multiple of the largest volume asked about: 1e-9 (cake-dominated at once) to 1e3
#: (cloth-dominated throughout)
V0_RATIOS = [1e-9, 1e-4, 1e-2, 1.0, 1e3]
V_TOP = 10.0  # m^3


def log_shares(V, V0, s):
    """(ln phi, ln psi) at V > 0 by brentq on r ln(phi) - ln(psi) = ln(V/V_0), solved in the log of
    the smaller share (so that both keep their precision): exact solution constructed here."""
    r, ly = 1.0 - s, math.log(V / V0)
    low = min(ly / r, ly, 0.0) - 50.0 / r - 50.0  # far below either root
    if r * math.log(0.5) - math.log(0.5) - ly > 0.0:  # phi < 1/2: in l = ln(phi)
        lphi = brentq(lambda x: r * x - math.log1p(-math.exp(x)) - ly, low, math.log(0.5),
                      xtol=1e-300, rtol=1e-15, maxiter=500)
        return lphi, math.log1p(-math.exp(lphi))
    lpsi = brentq(lambda x: r * math.log1p(-math.exp(x)) - x - ly, low, math.log(0.5),
                  xtol=1e-300, rtol=1e-15, maxiter=500)
    return math.log1p(-math.exp(lpsi)), lpsi


def shares(V, V0, s):
    """(phi, psi) at V (see :func:`log_shares`)."""
    if V == 0.0:
        return 0.0, 1.0
    lphi, lpsi = log_shares(V, V0, s)
    return math.exp(lphi), math.exp(lpsi)


def quad_time(V, V0, s):
    """t(V) = int_0^V B/psi dV' by scipy.integrate.quad, on geometric pieces."""
    edges = np.concatenate(([0.0], np.geomspace(V * 1e-12, V, 25)))
    return sum(quad(lambda v: B / shares(v, V0, s)[1], a, b, epsabs=0.0, epsrel=2e-14, limit=200)[0]
               for a, b in zip(edges[:-1], edges[1:], strict=True))


def volumes():
    return V_TOP * np.array([1e-7, 1e-4, 0.01, 0.1, 0.37, 1.0])


@pytest.mark.parametrize("s", COMPRESSIBILITIES)
@pytest.mark.parametrize("ratio", V0_RATIOS)
def test_the_time_is_the_quadrature_of_the_rate_equation(s, ratio):
    # oracle: scipy.integrate.quad of B/psi, psi from brentq (largest difference seen: 3.3e-15)
    V0 = ratio * V_TOP
    curve = CakeBasisPressureCurve(P, V0, B, s)
    for V in volumes():
        assert curve.time(float(V)) == pytest.approx(quad_time(V, V0, s), rel=1e-12)


@pytest.mark.parametrize("s", COMPRESSIBILITIES)
@pytest.mark.parametrize("ratio", V0_RATIOS)
def test_the_shares_and_the_rate_are_brentqs(s, ratio):
    # oracle: brentq on the split of the drop (largest difference seen in the log of either
    # share: 3.9e-16 times 1 + |ln phi| + |ln psi|)
    V0 = ratio * V_TOP
    curve = CakeBasisPressureCurve(P, V0, B, s)
    V = volumes()
    rates = curve.rate(V)
    for i, v in enumerate(V):
        # in logs: a share of 1e-100 is known to 1e-15 of its log at best (the oracle's too)
        lphi, lpsi = log_shares(v, V0, s)
        tol = 1e-14 * (1.0 + abs(lphi) + abs(lpsi))
        ph, ps = curve._share(float(v))
        if lphi < -700.0:  # below the smallest float
            assert ph < 1e-300 and ps == 1.0
        else:
            assert abs(math.log(ph) - lphi) <= tol and abs(math.log(ps) - lpsi) <= tol
        assert curve.rate(float(v)) == pytest.approx(math.exp(lpsi) / B, rel=tol)
        assert rates[i] == pytest.approx(math.exp(lpsi) / B, rel=tol)


@pytest.mark.parametrize("s", [0.05, 0.6, 0.99])
def test_the_volume_at_a_time_is_the_ode_of_the_rate_equation(s):
    # oracle: solve_ivp (DOP853) of dV/dt = psi/B, psi from brentq (largest difference seen: 3.3e-13)
    V0 = 0.4
    curve = CakeBasisPressureCurve(P, V0, B, s)
    times = np.array([1.0, 30.0, 300.0, 1500.0, 4000.0, 2e4])
    sol = solve_ivp(lambda t, V: [shares(max(float(V[0]), 0.0), V0, s)[1] / B], (0.0, times[-1]), [0.0],
                    t_eval=times, method="DOP853", rtol=1e-13, atol=1e-15)
    assert sol.success
    np.testing.assert_allclose(curve.volume(times), sol.y[0], rtol=1e-10)
    np.testing.assert_allclose([curve.volume(float(t)) for t in times], sol.y[0], rtol=1e-10)


@pytest.mark.parametrize("s", COMPRESSIBILITIES)
@pytest.mark.parametrize("ratio", V0_RATIOS)
def test_the_volume_at_the_time_of_a_volume_is_that_volume(s, ratio):
    # exact solution constructed here: t(V) then V(t) (largest difference seen: 5.3e-15)
    curve = CakeBasisPressureCurve(P, ratio * V_TOP, B, s)
    V = np.geomspace(V_TOP * 1e-9, V_TOP, 301)
    np.testing.assert_allclose(curve.volume(curve.time(V)), V, rtol=2e-14)
    for v in V[::30]:
        assert curve.volume(curve.time(float(v))) == pytest.approx(v, rel=2e-14)
    assert curve.volume(0.0) == 0.0 and curve.time(0.0) == 0.0
    np.testing.assert_array_equal(curve.volume(np.array([0.0, -1.0])), [0.0, 0.0])


# (and the ends: an array's Newton steps once stopped by a tolerance scaled by its largest |z|, set
# by the volume 0, which left 3e-14 at s = 1e-4 and 8e-11 at s = 0.9999: a review)
@pytest.mark.parametrize("s", [1e-4, *COMPRESSIBILITIES, 0.9999])
@pytest.mark.parametrize("ratio", [1e-9, 1e-2, 1.0, 1e3])
def test_floats_and_arrays_give_the_same(s, ratio):
    # exact solution constructed here: floats and arrays run the same compiled arithmetic
    # (cakebasis.py), so they agree bit for bit (until issue 12's compiled loops, numpy's other
    # formulas for the same shares agreed to 7.1e-15)
    curve = CakeBasisPressureCurve(P, ratio * V_TOP, B, s)
    V = np.concatenate(([0.0], np.geomspace(V_TOP * 1e-8, V_TOP, 97)))
    t = curve.time(V)
    np.testing.assert_array_equal([curve.time(float(v)) for v in V], t)
    np.testing.assert_array_equal([curve.rate(float(v)) for v in V], curve.rate(V))
    np.testing.assert_array_equal([curve.volume(float(x)) for x in t], curve.volume(t))
    assert isinstance(curve.time(1.0), float) and isinstance(curve.rate(1.0), float)
    assert isinstance(curve.volume(100.0), float) and isinstance(curve.pressure_at(1.0), float)
    assert curve.time(np.float64(2.0)) == curve.time(2.0) and curve.time(np.array(2.0)) == curve.time(2.0)
    assert curve.pressure_at(V).shape == V.shape and np.all(curve.pressure_at(V) == P)
    grid = V.reshape(2, 49)  # a chart's thickness x time map
    np.testing.assert_allclose(curve.time(grid), t.reshape(2, 49), rtol=2e-14)


@pytest.mark.parametrize("ratio", V0_RATIOS)
def test_without_compressibility_it_is_the_classical_equation(ratio):
    # oracle: Ruth's equation t = B V + K_p V^2 / 2 with K_p = B/V_0 (constant_pressure.py; the
    # textbooks), exactly at s = 0 and within O(s) as s -> 0 (largest difference seen at s = 0:
    # 1.8e-15)
    V0 = ratio * V_TOP
    K_p = B / V0
    V = np.geomspace(V_TOP * 1e-6, V_TOP, 41)
    classical = cp.time_for_volume(V, K_p, B)
    np.testing.assert_allclose(CakeBasisPressureCurve(P, V0, B, 0.0).time(V), classical, rtol=1e-14)
    for s in (1e-4, 1e-6, 1e-8):
        t = CakeBasisPressureCurve(P, V0, B, s).time(V)
        assert np.all(np.abs(t / classical - 1.0) <= 30.0 * s)
    t_star = CakeBasisPressureCurve(P, V0, B, 0.0).optimum_volume(1800.0, 0.3)
    assert t_star == pytest.approx(math.sqrt(1800.0 / (K_p * 0.8)), rel=1e-12)


@pytest.mark.parametrize("s", COMPRESSIBILITIES)
@pytest.mark.parametrize("ratio", [1e-6, 1e-2, 1.0, 1e3])
@pytest.mark.parametrize("downtime, a", [(600.0, 0.0), (1800.0, 0.5), (5.0, 2.0), (1e5, 0.1)])
def test_the_optimum_is_the_brute_force_one(s, ratio, downtime, a):
    # oracle: the throughput V / (t + a V/Q + t_d) on a grid of 20,001 volumes around the
    # optimum (geometric), refined by a bounded scalar search (largest difference seen: the
    # search's throughput above ours by 6.7e-16; in the volume of a flat peak, 6.4e-6)
    V0 = ratio * V_TOP
    curve = CakeBasisPressureCurve(P, V0, B, s)

    def throughput(V):
        return V / (curve.time(V) + a * V / curve.rate(V) + downtime)

    V_opt = curve.optimum_volume(downtime, a)
    grid = np.geomspace(V_opt * 1e-3, V_opt * 1e3, 20001)
    j = int(np.argmax(throughput(grid)))
    assert 0 < j < grid.size - 1
    found = minimize_scalar(lambda v: -throughput(float(v)), bounds=(grid[j - 1], grid[j + 1]), method="bounded",
                            options={"xatol": 1e-14 * grid[j]}).x
    assert throughput(V_opt) >= throughput(found) * (1.0 - 1e-14)
    assert V_opt == pytest.approx(found, rel=1e-5)
    assert throughput(V_opt) > throughput(V_opt * (1.0 - 1e-5)) and throughput(V_opt) > throughput(V_opt * (1.0 + 1e-5))
    assert curve.optimum_volume(0.0, a) == 0.0


@pytest.mark.parametrize("s", [0.3, 0.9])
def test_a_flow_end_is_where_the_rate_falls_to_it(s):
    # exact solution constructed here: the volume where Q = psi/B falls to a level, against brentq
    # on the curve's own rate
    curve = CakeBasisPressureCurve(P, 0.4, B, s)
    level = 0.2 / B
    V = curve.first_volume_where("reciprocal_rate", 1.0 / level, 100.0)
    assert V == pytest.approx(brentq(lambda v: curve.rate(v) - level, 1e-9, 100.0, rtol=1e-15), rel=1e-13)
    assert curve.first_volume_where("reciprocal_rate", 1.0 / level, V * 0.999) is None
    assert curve.first_volume_where("reciprocal_rate", B * 0.5, 1.0) == 0.0
    assert curve.first_volume_where("pressure", P * 1.1, 1.0) is None


def filtration(s=0.6):
    return Filtration(solids_per_filtrate=60.0, cake_volume_ratio=0.01, wet_to_dry_ratio=2.0, viscosity=1e-3,
                      resistance_ref=2e11, reference_pressure=3e5, compressibility=s, medium_resistance=5e11,
                      pressure_basis="cake")


@pytest.mark.parametrize("s", [0.05, 0.6, 0.95])
def test_the_constant_pressure_feed_gives_the_closed_form_on_the_cake_basis(s):
    # oracles: the filtration's own split of the drop and 1/Q (Filtration.resistance_per_rate:
    # Newton's method on x^p + k x = 1; largest difference seen: 1e-15) and the held-pressure
    # table the closed form replaces (within the table's own error: largest seen 7.6e-6 in time)
    f, A = filtration(s), 10.0
    curve = ConstantPressure(7e5).curve(f, A, 6.0)
    assert isinstance(curve, CakeBasisPressureCurve) and curve.pressure == 7e5
    assert not hasattr(curve, "K_p") and not hasattr(curve, "B")  # not Ruth's constants: not reported
    V = np.geomspace(1e-4, 6.0, 50)
    np.testing.assert_allclose(1.0 / curve.rate(V), f.resistance_per_rate(7e5, V, A), rtol=1e-12)
    table = held_pressure_curve(f, A, 7e5, 6.0)
    np.testing.assert_allclose(curve.time(V), table.time(V), rtol=1e-5)
    assert curve.optimum_volume(1800.0, 0.5) == pytest.approx(table.optimum_volume(1800.0, 0.5), rel=1e-4)


def test_pressure_steps_follow_the_closed_form_within_their_tables():
    # oracle: the closed-form curve at the second step's pressure; the stepped curve chains
    # held-pressure tables (accurate to about 1e-5 within them)
    f, A = filtration(), 10.0
    steps = PressureSteps(((3e5, 600.0), (7e5, 1e4)))
    curve = steps.curve(f, A, 5.0)
    V1 = float(curve.volume(600.0))
    held = ConstantPressure(7e5).curve(f, A, 5.0)
    V = np.array([V1 * 1.5, V1 * 3])
    assert V[-1] < curve.V_max
    np.testing.assert_allclose(curve.time(V) - 600.0, held.time(V) - held.time(V1), rtol=1e-5)


@pytest.mark.parametrize("r", [0.05, 0.3, 0.5, 0.82, 0.99])
def test_the_cloth_series_tiers_lose_nothing(r):
    # beyond phi = 1/2, J = -ln(psi) - H_r + psi sum_k a_k psi^k/(k + 1); the compiled J takes
    # 14, 16, 23 or 30 terms below psi = 0.05, 0.1, 0.2, 0.3 (issue 12). Oracle: the same
    # series written out here in Python, 400 terms added by math.fsum (exactly rounded), H_r by
    # scipy's digamma. Agreement to 5e-15 holds with the tiers (seen: a few ulp); tiers of 9, 13
    # and 18 terms miss it at psi just below their edges (seen: 4 of these cases fail).
    from scipy.special import digamma

    curve = CakeBasisPressureCurve(P, 1.0, B, 1.0 - r)
    H = float(digamma(r + 1.0)) + float(np.euler_gamma)
    for psi in (0.0499999, 0.05, 0.0999999, 0.1, 0.1999999, 0.2, 0.2999999, 0.3, 0.45):
        a, terms = r, []
        for k in range(400):
            terms.append(a * psi ** k / (k + 1.0))
            a *= (k + 1.0 - r) / (k + 2.0)
        exact = -math.log(psi) - H + psi * math.fsum(terms)
        assert curve._J(1.0 - psi, psi) == pytest.approx(exact, rel=5e-15, abs=0.0), psi


@pytest.mark.parametrize("r", [1e-4, 0.01, 0.1, 0.4, 0.95, 0.9999, 1.0])
def test_the_incomplete_beta_part_is_quads(r):
    # oracle: scipy.integrate.quad of u^r/(1 - u) (largest difference seen: 1.6e-15), on both
    # sides of phi = 1/2 and of the shares 0.05 where the rule changes, of the cloth series' tiers
    # (psi 0.1, 0.2, 0.3: fewer terms below each), and near phi = 1 through psi
    curve = CakeBasisPressureCurve(P, 1.0, B, 1.0 - r)
    for psi in (1.0 - 1e-8, 0.99, 0.951, 0.949, 0.9, 0.5000001, 0.5, 0.4999999, 0.45, 0.4, 0.30001, 0.3, 0.29999,
                0.20001, 0.2, 0.19999, 0.10001, 0.1, 0.09999, 0.051, 0.049, 1e-3, 1e-6, 1e-12):
        phi = 1.0 - psi
        if psi < 0.5:  # the integrand's log singularity at 1 split off: -ln(psi) - int_0^phi (1 - u^r)/(1 - u)
            exact = -math.log(psi) - quad(lambda u: -math.expm1(r * math.log(u)) / (1.0 - u), 0.0, phi,
                                          epsabs=0.0, epsrel=2e-14, limit=200)[0]
        else:
            exact = quad(lambda u: u**r / (1.0 - u), 0.0, phi, epsabs=0.0, epsrel=2e-14, limit=200)[0]
        assert curve._J(phi, psi) == pytest.approx(exact, rel=1e-13)
