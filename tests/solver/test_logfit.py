"""The press-log fit (server/solver/logfit.py) against synthetic logs from the exact model
(tests/synthetic_logs.py: Ruth's rate equation solved for each feed, derived here), an
independent nonlinear least-squares fit of the ODE (scipy solve_ivp + least_squares), and
brute force over the cloth-wash interval."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares

from server.solver import logfit, planning
from tests.synthetic_logs import ALPHA, AREA, MU, PRESSURE, R0, C, Feed, exact_cycle, synthetic_log

FEEDS = {
    "constant_pressure": Feed("constant_pressure"),
    "rate_then_pressure": Feed("rate_then_pressure", flow=0.03),  # rate held for the first ~10 min
    "pump_curve": Feed("pump_curve", flow=0.12),
}


def volume_from_flow(log):
    return np.concatenate(([0.0], np.cumsum(0.5 * (log.flow[1:] + log.flow[:-1]) * np.diff(log.time))))


def fit_log(log, signal="flow", **kw):
    V = volume_from_flow(log) if signal == "flow" else log.volume
    cycles = logfit.find_cycles(log.time, log.pressure, None if signal == "flow" else V)
    fits = logfit.fit_cycles(log.time, log.pressure, V, cycles, AREA, MU, C,
                             volume_scatter="integrated" if signal == "flow" else "reading", **kw)
    return cycles, fits


@pytest.mark.parametrize("signal", ["flow", "volume"])
@pytest.mark.parametrize("mode", list(FEEDS))
def test_noisy_logs_give_each_cycles_alpha_and_cloth_within_2_percent(mode, signal):
    # exact model, cloth +2 % a cycle, washed every 15 cycles, 0.5 % noise (seeded)
    log = synthetic_log(cycles=45, feed=FEEDS[mode], growth=0.02, wash_every=15, noise=0.005, seed=17)
    cycles, fits = fit_log(log, signal)
    assert cycles.count == 45
    alpha_err = np.abs(fits.resistance / log.alpha - 1)
    rm_err = np.abs(fits.medium_resistance / log.medium_resistance - 1)
    print(f"{mode} {signal}: max alpha error {alpha_err.max():.2%}, max R_m error {rm_err.max():.2%}")
    assert alpha_err.max() < 0.02
    assert rm_err.max() < 0.02
    assert np.all(fits.r_squared > 0.999)


@pytest.mark.parametrize("mode", list(FEEDS))
def test_washes_are_found_and_the_growth_rate_is_within_10_percent(mode):
    log = synthetic_log(cycles=45, feed=FEEDS[mode], growth=0.02, wash_every=15, noise=0.005, seed=18)
    cycles, fits = fit_log(log)
    washes = logfit.detect_washes(fits.medium_resistance)
    assert (washes + 1).tolist() == log.washes == [16, 31]
    b = logfit.cloth_blinding(np.arange(1, 46), fits.medium_resistance, washes)
    true_growth = 0.02 * R0
    print(f"{mode}: growth error {b.growth / true_growth - 1:+.2%}, clean R_m error {b.clean / R0 - 1:+.2%}")
    assert abs(b.growth / true_growth - 1) < 0.10
    assert abs(b.clean / R0 - 1) < 0.02
    assert b.cycles_since_wash == 15


def test_no_washes_are_found_in_a_cloth_that_does_not_blind():
    log = synthetic_log(cycles=40, growth=0.0, noise=0.005, seed=3)
    _, fits = fit_log(log)
    assert logfit.detect_washes(fits.medium_resistance).size == 0
    b = logfit.cloth_blinding(np.arange(1, 41), fits.medium_resistance, [])
    assert abs(b.growth) < 3 * b.growth_stderr + 1e-3 * R0


def test_the_recommended_wash_interval_is_within_10_percent_of_brute_force():
    # constant pressure: T_k = t_d + K_p V^2/2 + B_k V, B_k = mu (R0 + g k)/(A dP) (derived here)
    log = synthetic_log(cycles=45, growth=0.02, wash_every=15, noise=0.005, seed=19)
    cycles, fits = fit_log(log)
    washes = logfit.detect_washes(fits.medium_resistance)
    b = logfit.cloth_blinding(np.arange(1, 46), fits.medium_resistance, washes)
    V = float(np.median(log.filtrate_volume))
    wash_time, downtime = 7200.0, 600.0
    K_p = MU * ALPHA * C / (AREA**2 * PRESSURE)
    k = np.arange(400)
    true_T = downtime + K_p * V**2 / 2 + MU * (R0 + 0.02 * R0 * k) / (AREA * PRESSURE) * V
    brute, _ = planning.best_interval(true_T, wash_time)
    delta_fit = MU * b.growth * V / (AREA * PRESSURE)
    recommended = planning.classic_wash_interval(wash_time, delta_fit)
    print(f"wash interval: recommended {recommended:.2f}, brute force {brute}")
    assert abs(recommended / brute - 1) < 0.10


def test_the_integrated_fit_equals_a_nonlinear_fit_of_the_ode_on_clean_data():
    # one clean pump-curve cycle; the ODE dV/dt = A p(t) / (mu (alpha c V / A + R_m)) with the
    # logged pressure interpolated, fitted to the logged volume by scipy's least_squares
    log = synthetic_log(cycles=1, feed=FEEDS["pump_curve"], noise=0.0, alpha=3.0e11, R0=5.0e11)
    cycles, fits = fit_log(log, "volume")
    i0, i1 = int(cycles.first[0]), int(cycles.last[0]) + 1
    t = log.time[i0:i1] - log.time[i0]
    p = log.pressure[i0:i1]
    V = log.volume[i0:i1] - log.volume[i0]

    def model(theta):
        a, r = np.exp(theta)

        def rhs(tt, y):
            return [AREA * np.interp(tt, t, p) / (MU * (a * C * y[0] / AREA + r))]

        sol = solve_ivp(rhs, (0.0, t[-1]), [0.0], t_eval=t, rtol=1e-10, atol=1e-12, method="LSODA")
        return sol.y[0]

    start = np.log([1.0e11, 1.0e12])  # far from the answer
    ode = least_squares(lambda th: model(th) - V, start, x_scale=1.0, xtol=1e-12, ftol=1e-12)
    alpha_ode, rm_ode = np.exp(ode.x)
    print(f"integrated: {fits.resistance[0]:.6e} {fits.medium_resistance[0]:.6e}; ODE: {alpha_ode:.6e} {rm_ode:.6e}")
    assert fits.resistance[0] == pytest.approx(alpha_ode, rel=2e-3)
    assert fits.medium_resistance[0] == pytest.approx(rm_ode, rel=2e-3)
    assert fits.resistance[0] == pytest.approx(3.0e11, rel=1e-3)


def test_a_compressible_cake_gives_one_alpha_ref_at_two_pressures():
    # alpha = alpha_ref (dP/p_ref)^s (Tiller's power law); cycles alternate 4 and 8 bar at constant
    # pressure: on the total basis the fit with the known s gives back alpha_ref in every cycle
    s, p_ref, alpha_ref = 0.4, 6.0e5, 2.0e11
    t_all, p_all, V_all = [], [], []
    t0 = 0.0
    for k in range(6):
        P = 4.0e5 if k % 2 == 0 else 8.0e5
        t, p, q, V = exact_cycle(Feed("constant_pressure", pressure=P), alpha_ref * (P / p_ref) ** s, R0, 1800.0, 2.0)
        pad = 300
        t_all += [t0 + 2.0 * np.arange(3), t0 + 6.0 + t, t0 + 6.0 + t[-1] + 2.0 * np.arange(1, pad)]
        p_all += [np.zeros(3), p, np.zeros(pad - 1)]
        V_all += [np.zeros(3), V, np.full(pad - 1, V[-1])]
        t0 = t_all[-1][-1] + 2.0
    t, p, V = (np.concatenate(x) for x in (t_all, p_all, V_all))
    cycles = logfit.find_cycles(t, p, V)
    fits = logfit.fit_cycles(t, p, V, cycles, AREA, MU, C, compressibility=s, reference_pressure=p_ref,
                             volume_scatter="reading")
    assert cycles.count == 6
    np.testing.assert_allclose(fits.resistance, alpha_ref, rtol=1e-3)
    np.testing.assert_allclose(fits.medium_resistance, R0, rtol=1e-3)
    # and ignoring the compressibility gives two different alphas: the test can fail
    plain = logfit.fit_cycles(t, p, V, cycles, AREA, MU, C, volume_scatter="reading")
    assert plain.resistance[1] / plain.resistance[0] == pytest.approx(2.0**s, rel=1e-3)


def test_the_cake_basis_with_no_compressibility_is_the_total_basis():
    log = synthetic_log(cycles=3, noise=0.0)
    V = volume_from_flow(log)
    cycles = logfit.find_cycles(log.time, log.pressure)
    a = logfit.fit_cycles(log.time, log.pressure, V, cycles, AREA, MU, C, pressure_basis="cake")
    b = logfit.fit_cycles(log.time, log.pressure, V, cycles, AREA, MU, C, pressure_basis="total")
    np.testing.assert_allclose(a.resistance, b.resistance, rtol=1e-12)


def test_a_cycle_column_resets_and_gaps_each_split_the_log_the_same():
    log = synthetic_log(cycles=5, noise=0.005)
    by_pressure = logfit.find_cycles(log.time, log.pressure)
    by_column = logfit.find_cycles(log.time, log.pressure, cycle_numbers=log.cycle)
    by_reset = logfit.find_cycles(log.time, log.pressure, volume=log.volume)
    assert by_pressure.count == by_column.count == by_reset.count == 5
    np.testing.assert_array_equal(by_pressure.first, by_column.first)
    np.testing.assert_array_equal(by_pressure.last, by_reset.last)
    # a pause with the pressure on at both sides is missing data inside a cycle, not a new cycle
    # (server/presslog.py refuses it, naming the row)
    p_on = log.pressure.copy()
    p_on[p_on == 0] = 5e5  # never back to zero
    t2 = log.time.copy()
    t2[log.cycle >= 3] += 3600.0
    assert logfit.find_cycles(t2, p_on).count == 1


def test_a_step_in_alpha_is_flagged_as_drift_and_a_steady_alpha_is_not():
    steady = synthetic_log(cycles=40, noise=0.005, seed=5)
    _, fits = fit_log(steady)
    assert not logfit.alpha_drift(np.arange(1, 41), fits.resistance).flagged
    changed = synthetic_log(cycles=40, noise=0.005, seed=5, alpha_of_cycle=lambda k: ALPHA * (1.2 if k >= 25 else 1))
    _, fits2 = fit_log(changed)
    d = logfit.alpha_drift(np.arange(1, 41), fits2.resistance)
    assert d.flagged and "feed" in d.note


def test_the_model_curve_of_a_cycle_follows_its_log():
    log = synthetic_log(cycles=2, feed=FEEDS["rate_then_pressure"], noise=0.0)
    V = volume_from_flow(log)
    cycles = logfit.find_cycles(log.time, log.pressure)
    fits = logfit.fit_cycles(log.time, log.pressure, V, cycles, AREA, MU, C)
    c = logfit.cycle_curves(log.time, log.pressure, V, cycles, 1, fits, 1, AREA, MU, C)
    np.testing.assert_allclose(c["volume_model"], c["volume"], rtol=2e-3, atol=1e-3)
    assert np.max(np.abs(c["residuals"])) < 1e-3 * c["integral"][-1]


@pytest.mark.parametrize("signal", ["flow", "volume"])
def test_standard_errors_match_the_errors_seen(signal):
    # 45 noisy cycles: the errors over their standard errors should scatter like a standard
    # normal (common practice, no source); an integrated signal's residuals follow each other,
    # and errors that counted the rows as independent would come out too small
    log = synthetic_log(cycles=45, noise=0.005, seed=23)
    _, fits = fit_log(log, signal)
    for fitted, true, se in ((fits.resistance, log.alpha, fits.resistance_stderr),
                             (fits.medium_resistance, log.medium_resistance, fits.medium_resistance_stderr)):
        z = (fitted - true) / se
        print(f"{signal}: |z| < 2 in {np.mean(np.abs(z) < 2):.0%} of cycles, std of z {np.std(z):.2f}")
        assert np.mean(np.abs(z) < 2) > 0.8
        assert 0.5 < np.std(z) < 1.5


def test_a_compressible_cake_on_the_cake_pressure_basis_matches_the_cycle_solver():
    # the log of a constant-pressure cycle from the cycle solver's own cake-basis curve
    # (feeds.ConstantPressure on Filtration.on_cake_basis: HeldPressureCurve, tabulated 1/Q, a
    # different code path from the fit's fixed point); the fit gives back alpha_ref and R_m,
    # and the total basis does not (so the test can fail)
    from server.solver import ConstantPressure, Filtration

    s, p_ref, alpha_ref = 0.5, 6.0e5, 2.0e11
    f = Filtration(solids_per_filtrate=C, cake_volume_ratio=0.01, wet_to_dry_ratio=1.6, viscosity=MU,
                   resistance_ref=alpha_ref, reference_pressure=p_ref, compressibility=s, medium_resistance=R0,
                   pressure_basis="cake")
    curve = ConstantPressure(6.0e5).curve(f, AREA, 60.0)
    t = np.arange(0.0, 1800.1, 2.0)
    tt = np.concatenate(([-6.0, -4.0, -2.0], t))
    pp = np.concatenate((np.zeros(3), np.full(t.size, 6.0e5)))
    VV = np.concatenate((np.zeros(3), curve.volume(t)))
    cycles = logfit.find_cycles(tt, pp, VV)
    kw = dict(compressibility=s, reference_pressure=p_ref, volume_scatter="reading")
    cake = logfit.fit_cycles(tt, pp, VV, cycles, AREA, MU, C, pressure_basis="cake", **kw)
    total = logfit.fit_cycles(tt, pp, VV, cycles, AREA, MU, C, pressure_basis="total", **kw)
    assert cake.resistance[0] == pytest.approx(alpha_ref, rel=1e-3)
    assert cake.medium_resistance[0] == pytest.approx(R0, rel=2e-3)
    assert abs(total.medium_resistance[0] / R0 - 1) > 0.05
    # the model drawn over the log is the fitted one, compressibility and basis included
    curve_fit = logfit.cycle_curves(tt, pp, VV, cycles, 0, cake, 0, AREA, MU, C)
    np.testing.assert_allclose(curve_fit["volume_model"][5:], curve_fit["volume"][5:], rtol=1e-3)


# ---- robust summaries, drift size, the log step and patterned residuals ----------------------


def test_the_robust_centre_is_the_median_with_its_mad_error_and_never_below_the_cycles_own():
    # constructed here: [1, 2, 3, 4, 100] has median 3 and MAD 1; the median's error for normal
    # scatter is sqrt(pi/2) 1.4826 MAD / sqrt(n) (common practice, no source)
    c = logfit.robust_centre([1.0, 2.0, 3.0, 4.0, 100.0], [0.01] * 5)
    assert c.value == 3.0 and c.count == 5
    assert c.stderr == pytest.approx(np.sqrt(np.pi / 2) * 1.4826 / np.sqrt(5), rel=1e-12)
    # cycles that repeat each other exactly: no scatter, the error is their own over sqrt(n)
    same = logfit.robust_centre([5.0, 5.0, 5.0], [0.3, 0.3, 0.3])
    assert same.stderr == pytest.approx(0.3 / np.sqrt(3), rel=1e-12)


def test_invalid_cycles_are_named_with_their_reasons():
    log = synthetic_log(cycles=6, noise=0.005, seed=31)
    _, fits = fit_log(log)
    broken = logfit.CycleFits(**{**fits.__dict__,
                                 "resistance": fits.resistance * np.array([1, 1, -1, 1, 1, 10.0]),
                                 "medium_resistance": fits.medium_resistance * np.array([1, -1, 1, 1, 1, 1.0]),
                                 "r_squared": np.where(np.arange(6) == 3, 0.9, fits.r_squared)})
    why = logfit.screen_cycles(broken)
    assert why[0] == [] and why[4] == []
    assert "below zero" in why[1][0] and "not above zero" in why[2][0] and "R² 0.900" in why[3][0]
    assert "times the median" in why[5][0]


def test_drift_needs_a_change_beyond_the_scatter_and_of_practical_size():
    # constructed here: alpha rising linearly by 1 % or 8 % over 40 cycles, with an alternating
    # scatter of 0.05 %; both slopes are beyond the scatter, only 8 % is beyond 5 %
    k = np.arange(1, 41)
    wiggle = 1 + 0.0005 * (-1.0) ** k
    small = logfit.alpha_drift(k, ALPHA * (1 + 0.01 * (k - 1) / 39) * wiggle)
    big = logfit.alpha_drift(k, ALPHA * (1 + 0.08 * (k - 1) / 39) * wiggle)
    assert small.trend.slope_low > 0 and abs(small.change) > 3 * small.trend.scatter  # beyond the scatter
    assert not small.flagged
    assert big.flagged and "+8.0 %" in big.note and "beyond 5 %" in big.note  # the house style: "8 %"


def test_two_repeated_wash_intervals_do_not_make_the_clean_cloth_exact():
    # constructed here: the same curved R_m in two intervals; their intercepts agree exactly, but
    # the straight line misses the curve, and the clean cloth's error says so
    R = np.array([1.0, 1.5, 2.5, 4.0] * 2)
    b = logfit.cloth_blinding(np.arange(1, 9), R, [4])
    intercepts = np.array([b.clean, b.clean])
    assert np.std(intercepts, ddof=1) == 0.0  # the error the intercepts' scatter alone would give
    x = np.tile(np.arange(4.0), 2)
    g = np.sum((x - 1.5) * (R - 2.25)) / 10.0  # the pooled slope: Sxx = 2 x sum((x - 1.5)^2) = 10
    assert b.growth == pytest.approx(g, rel=1e-12) and b.clean == pytest.approx(2.25 - 1.5 * g, rel=1e-12)
    resid = R - (2.25 - 1.5 * g) - g * x
    s2 = np.sum(resid**2) / (8 - 2 - 1)
    g_se = np.sqrt(s2 / 10.0)
    expected = np.sqrt(2 * s2 / 4 + (2 * 1.5 * g_se) ** 2) / 2  # derived in cloth_blinding
    assert b.clean_stderr == pytest.approx(expected, rel=1e-12) and b.clean_stderr > 0.1


@pytest.mark.parametrize("step, resolved", [(1.0, True), (2.0, True), (5.0, False), (10.0, False), (30.0, False)])
def test_a_feed_started_between_rows_biases_r_m_within_its_bound_and_coarse_steps_are_flagged(step, resolved):
    # each feed starts at a random moment within the step before its first row (seeded); the
    # fit counts from that row, so R_m comes out high by alpha c V_0 / A, V_0 the filtrate the log
    # missed (derived in logfit.CycleFits); the bound holds it, and is below 20 % of R_m only at
    # fine steps
    log = synthetic_log(cycles=8, growth=0.02, noise=0.005, seed=41, step=step, late_start=True, grid=50_001)
    _, fits = fit_log(log)
    excess = fits.medium_resistance - log.medium_resistance
    print(f"step {step:g} s: R_m excess {np.min(excess / log.medium_resistance):+.1%} to "
          f"{np.max(excess / log.medium_resistance):+.1%}, bound {np.median(fits.start_bound / R0):.1%}")
    assert np.all(excess <= fits.start_bound + 3 * fits.medium_resistance_stderr)
    res = logfit.cloth_resolution(fits, np.ones(8, dtype=bool), AREA, MU, C)
    assert res.resolved is resolved and res.step == step
    # the step that resolves the true cloth (constructed here): V* = 0.2 R0 A / (2.414 alpha c),
    # a standing start at 6 bar takes mu (alpha c V*^2 / (2 A^2) + R0 V* / A) / dP = 2.3 s
    V = 0.2 * R0 * AREA / (logfit.START_VOLUME_FACTOR * ALPHA * C)
    true_needed = MU * (ALPHA * C * V * V / (2 * AREA**2) + R0 * V / AREA) / PRESSURE
    assert true_needed == pytest.approx(2.3, abs=0.05)
    assert 0.5 * true_needed < res.step_needed < 1.5 * true_needed
    # alpha is not touched by where the feed started
    assert np.max(np.abs(fits.resistance / log.alpha - 1)) < 0.01


def test_residuals_with_a_pattern_widen_the_errors_and_noise_does_not():
    # a clean incompressible log fitted as a compressible cake on the cake basis: the misfit is
    # smooth, not noise; the consistent fit of a noisy log is not flagged
    log = synthetic_log(cycles=3, noise=0.0)
    V = volume_from_flow(log)
    cycles = logfit.find_cycles(log.time, log.pressure)
    wrong = logfit.fit_cycles(log.time, log.pressure, V, cycles, AREA, MU, C, compressibility=0.4,
                              reference_pressure=PRESSURE, pressure_basis="cake")
    assert wrong.patterned.all()
    noisy = synthetic_log(cycles=10, noise=0.005, seed=43)
    _, fits = fit_log(noisy)
    assert not fits.patterned.any()
