"""The best cycle is the global optimum for every feed: no end time beats it.

Oracles built here, independently of the solver: Ruth's equation solved step by step for a
pressure schedule (t - t0 = K_i (V^2 - V0^2)/2 + B_i (V - V0) in each step, K_i = mu alpha
c/(A^2 dP_i), B_i = mu R_m/(A dP_i); McCabe, Smith & Harriott, Unit Operations of Chemical
Engineering, 7th ed., ch. 30, from memory), and a dense grid of end times.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from server.solver import (
    ConstantRate,
    CycleSettings,
    Filtration,
    Press,
    PressSystem,
    PressureSteps,
    PumpCurve,
    solve_cycle,
)

MU, C, V_CAKE, AREA = 1e-3, 200.0, 0.1, 40.0


def filtration(alpha, R_m, s=0.0):
    return Filtration(C, V_CAKE, 1.6, MU, alpha, 5e5, s, R_m)


def schedule_volume(steps, alpha, R_m, t):
    """V(t) for a pressure schedule, Ruth's equation step by step (incompressible cake)."""
    t = np.asarray(t, dtype=float)
    V = np.zeros_like(t)
    t0, V0 = 0.0, 0.0
    for i, (dP, duration) in enumerate(steps):
        K = MU * alpha * C / (AREA**2 * dP)
        B = MU * R_m / (AREA * dP)
        last = i == len(steps) - 1
        in_step = (t >= t0) & ((t < t0 + duration) | last)
        dt = t[in_step] - t0
        # K/2 (V^2 - V0^2) + B (V - V0) = dt, solved for V
        b = B + K * V0
        V[in_step] = V0 + (-b + np.sqrt(b * b + 2 * K * dt)) / K
        if not last:
            b = B + K * V0
            V0 = V0 + (-b + np.sqrt(b * b + 2 * K * duration)) / K
            t0 += duration
    return V


def test_a_low_first_step_gives_an_early_peak_that_is_found():
    # 0.3 bar for 60 min, then 12 bar held, 5 min downtime, 30 mm chambers: the throughput
    # peaks after 5 min in the low step, falls, and rises again in the high step, whose own
    # peak lies past full chambers (61.6 min). The best feasible cycle is the early peak
    # (7.08 m³/h), not full chambers (5.40 m³/h, what a single-peak search reports).
    steps = ((0.3e5, 3600.0), (12e5, 36000.0))
    alpha, R_m, t_d = 1e11, 1e10, 300.0
    system = PressSystem(filtration(alpha, R_m), Press(AREA, 0.03), PressureSteps(steps), CycleSettings(t_d))
    sol = solve_cycle(system)
    t_full = sol.chambers_full.filtration_time
    assert 3600.0 < t_full < 3 * 3600.0
    t = np.concatenate((np.linspace(1.0, t_full, 200_001), [3600.0]))
    V = schedule_volume(steps, alpha, R_m, t)
    Q = V / (t + t_d)
    assert sol.best.filtrate_throughput >= Q.max() * (1 - 1e-9)
    assert sol.best.filtrate_throughput == pytest.approx(Q.max(), rel=1e-6)
    assert sol.best.filtration_time < 3600.0  # the early peak, in the low step
    assert sol.best.filtrate_throughput > 1.3 * sol.chambers_full.filtrate_throughput


step = st.tuples(st.floats(0.2e5, 16e5), st.floats(60.0, 36000.0))


@settings(max_examples=120, deadline=None)
@given(steps=st.lists(step, min_size=1, max_size=4), alpha=st.floats(1e9, 1e13),
       R_m=st.one_of(st.just(0.0), st.floats(1e8, 1e12)), t_d=st.floats(60.0, 7200.0), L=st.floats(0.01, 0.1))
def test_no_end_time_beats_the_best_cycle_of_a_pressure_schedule(steps, alpha, R_m, t_d, L):
    system = PressSystem(filtration(alpha, R_m), Press(AREA, L), PressureSteps(tuple(steps)), CycleSettings(t_d))
    sol = solve_cycle(system)
    t_full = sol.chambers_full.filtration_time
    knots = np.cumsum([d for _, d in steps[:-1]])
    t = np.unique(np.concatenate((np.geomspace(t_full * 1e-6, t_full, 20_001), knots[knots < t_full])))
    V = schedule_volume(steps, alpha, R_m, t)
    Q = V / (t + t_d)
    assert sol.best.filtrate_throughput >= Q.max() * (1 - 1e-7)
    assert sol.best.feasible


def _pump(q_max, p_max):
    q = np.linspace(0.0, q_max, 6)
    return tuple(zip(q, p_max * (1 - (q / q_max) ** 2) + 1e3))


def rate_feed_flow(q0, p_max, alpha, R_m, V):
    """Filtrate flow of a constant-rate pump with relief at p_max, incompressible cake, after V:
    the set flow until the cake needs more than p_max to pass it, then p_max (Ruth)."""
    with np.errstate(divide="ignore"):  # no cake and no cloth: nothing limits the flow but the pump
        return np.minimum(q0, p_max * AREA / (MU * (alpha * C * V / AREA + R_m)))


def pump_feed_flow(points, alpha, R_m, V):
    """Operating point of a centrifugal pump (its curve through the points, PCHIP) against an
    incompressible cake after V: the flow q where the pump's pressure equals the pressure the
    cake and cloth need, P_cake = mu q (alpha c V / A + R_m) / A, by bisection on q."""
    from scipy.interpolate import PchipInterpolator

    q_pts, p_pts = np.array(points).T
    pump = PchipInterpolator(q_pts, p_pts)
    resistance = MU * (alpha * C * V / AREA + R_m) / AREA
    lo, hi = np.zeros_like(V), np.full_like(V, q_pts[-1])
    top_ok = pump(hi) >= resistance * hi  # the pump still has pressure to spare at its top flow
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        above = pump(mid) >= resistance * mid
        lo, hi = np.where(above, mid, lo), np.where(above, hi, mid)
    return np.where(top_ok, q_pts[-1], 0.5 * (lo + hi))


@settings(max_examples=40, deadline=None)
@given(kind=st.sampled_from(["rate", "pump"]), q=st.floats(1e-3, 0.2), p=st.floats(2e5, 16e5),
       alpha=st.floats(1e9, 1e13), R_m=st.one_of(st.just(0.0), st.floats(1e8, 1e12)), t_d=st.floats(60.0, 7200.0),
       L=st.floats(0.01, 0.1), wash=st.sampled_from([0.0, 1.0]))
def test_no_end_volume_beats_the_best_cycle_of_a_pump(kind, q, p, alpha, R_m, t_d, L, wash):
    points = _pump(q, p)
    feed = ConstantRate(q, p) if kind == "rate" else PumpCurve(points)
    system = PressSystem(filtration(alpha, R_m), Press(AREA, L), feed, CycleSettings(t_d, wash))
    sol = solve_cycle(system)
    # an independent oracle: the flow at every volume, t(V) by the trapezoidal rule on a fine
    # grid, through-washing at a quarter of the final flow, and the cycle's throughput
    V_full = sol.chambers_full_volume
    V = np.concatenate(([0.0], np.geomspace(V_full * 1e-7, V_full, 40_000)))
    flow = rate_feed_flow(q, p, alpha, R_m, V) if kind == "rate" else pump_feed_flow(points, alpha, R_m, V)
    t = np.concatenate(([0.0], np.cumsum(0.5 * (1 / flow[1:] + 1 / flow[:-1]) * np.diff(V))))
    Q = V[1:] / (t[1:] + 4 * wash * V[1:] / flow[1:] + t_d)
    best = sol.best.filtrate_throughput
    assert best >= Q.max() * (1 - 2e-4)  # nothing beats it (within the oracle's quadrature)
    assert best <= Q.max() * (1 + 2e-4)  # and it is a real cycle, not an over-estimate
