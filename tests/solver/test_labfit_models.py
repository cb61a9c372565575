"""The lab fit's models, region search and cake pressure basis on synthetic tests built from the
exact model (seeded; derived here): a constant-rate fill then constant pressure, clean straight
lines with 1 % noise, and a compressible cake integrated on the cake pressure basis."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from server.solver.feeds import ConstantPressure, Filtration
from server.solver.labfit import LabTest, evaluate_test, fit_for_basis

A, MU, C, DP = 0.01, 1e-3, 50.0, 3e5
ALPHA, R_M = 2e11, 8e10
K_P, B = MU * ALPHA * C / (A**2 * DP), MU * R_M / (A * DP)
V = np.linspace(0.25, 5.0, 20) * 1e-3  # 20 readings to 5 L


def fill_then_pressure(V1):
    """Exact t(V): constant rate Q_0 (the rate the cake passes at DP when V1 is collected) up to
    V1, then constant pressure: t = t_1 + (K_p/2)(V^2 - V1^2) + B (V - V1)."""
    Q0 = 1.0 / (K_P * V1 + B)
    t1 = V1 / Q0
    return np.where(V <= V1, V / Q0, t1 + K_P / 2 * (V**2 - V1**2) + B * (V - V1)), t1


@pytest.mark.parametrize("V1", [1.2e-3, 0.5e-3])
def test_a_constant_rate_fill_is_detected_and_the_fit_is_exact_after_it(V1):
    t, t1 = fill_then_pressure(V1)
    fit = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V)))
    assert fit.model == "three_parameter" and "filling period" in fit.model_note
    assert fit.resistance == pytest.approx(ALPHA, rel=0.01)
    assert fit.medium_resistance == pytest.approx(R_M, rel=0.01)
    assert fit.filling["readings"] == int(np.sum(V < V1))
    assert fit.filling["volume"] == pytest.approx(V1, rel=0.01)
    assert fit.filling["time"] == pytest.approx(t1, rel=0.01)
    # the classic line through the same readings is far off: the test can tell
    classic = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V), model="classic"))
    assert abs(classic.resistance / ALPHA - 1) > 0.03


def test_pressure_readings_mark_the_filling_period():
    V1 = 1.2e-3
    t, _ = fill_then_pressure(V1)
    # during the fill the pressure rises to the set pressure (the cake's resistance at Q_0)
    p = np.where(V < V1, DP * (K_P * V + B) / (K_P * V1 + B), DP)
    fit = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V), pressures=tuple(p)))
    assert fit.model == "three_parameter" and "pressure readings" in fit.model_note
    assert fit.points_used[0] == int(np.sum(V < V1))
    assert fit.resistance == pytest.approx(ALPHA, rel=1e-6)
    assert fit.medium_resistance == pytest.approx(R_M, rel=1e-6)
    # the classic line starts at the first reading at pressure: exact as well
    classic = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V), pressures=tuple(p), model="classic"))
    assert classic.resistance == pytest.approx(ALPHA, rel=1e-6)


def test_clean_lines_with_one_percent_noise_rarely_lose_a_reading():
    # 300 data sets of t = (K_p/2) V^2 + B V with 1 % relative noise on t (seeded): the automatic
    # region drops a reading in at most 2 % of them, over the whole search (both models)
    rng = np.random.default_rng(14)
    t_exact = K_P / 2 * V**2 + B * V
    dropped = 0
    for _ in range(300):
        t = np.sort(t_exact * (1 + rng.normal(0, 0.01, V.size)))
        fit = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V)))
        dropped += len(fit.points_used) != V.size
    assert dropped / 300 <= 0.02


def test_the_users_region_wins():
    t, _ = fill_then_pressure(1.2e-3)
    fit = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V), use=(0, 19)))
    assert fit.points_used == list(range(20)) and "chosen by the user" in fit.region


def test_three_parameter_standard_errors_cover_the_truth():
    # 1 % noise after a 0.5 L fill (seeded): alpha within one standard error about 68 % of the time
    rng = np.random.default_rng(7)
    t_exact, _ = fill_then_pressure(0.5e-3)
    inside = 0
    for _ in range(200):
        t = np.sort(t_exact * (1 + rng.normal(0, 0.01, V.size)))
        fit = evaluate_test(LabTest(DP, A, MU, C, tuple(t), tuple(V), model="three_parameter", use=(2, 19)))
        inside += abs(fit.resistance - ALPHA) < fit.resistance_stderr
    assert 0.58 < inside / 200 < 0.78


# ---- a compressible cake behind a cloth, on the cake pressure basis ------------------

S, ALPHA_3BAR, CLOTH = 0.6, 5e10, 5e11


def alpha_c(p):
    return ALPHA_3BAR * (p / 3e5) ** S


def exact_times(P, area, volumes):
    """t(V) at constant P, alpha at the cake's pressure: dV/dt = A P / (mu (alpha(dp_c) c V/A + R_m)),
    dp_c from the cake's and cloth's Darcy laws in series (brentq), integrated by solve_ivp."""
    def dtdV(v, _t):
        if v == 0:
            return [MU * CLOTH / (area * P)]
        q = lambda x: 0.0 if x == 0 else x * area**2 / (MU * alpha_c(x) * C * v)  # noqa: E731
        x = brentq(lambda x: x + MU * CLOTH * q(x) / area - P, 0.0, P, xtol=1e-300, rtol=1e-14)
        return [MU * (alpha_c(x) * C * v / area + CLOTH) / (area * P)]

    return solve_ivp(dtdV, (0, float(volumes[-1])), [0.0], t_eval=volumes, rtol=1e-11, atol=1e-12,
                     method="DOP853").y[0]


def test_cake_basis_fit_predicts_a_thicker_cake_at_a_higher_pressure():
    lab_V = np.linspace(0.05, 1.0, 15) * 1e-3  # to 1 L on 0.01 m^2: the cloth holds most of the pressure
    tests = [LabTest(P, A, MU, C, tuple(exact_times(P, A, lab_V)), tuple(lab_V), model="classic")
             for P in (1.5e5, 3e5, 6e5)]
    press_area = 40.0
    thickness_ratio = np.array([2.0, 2.5, 3.0])
    V_press = thickness_ratio * lab_V[-1] / A * press_area  # cakes 2-3 times the lab cake
    exact = exact_times(7e5, press_area, np.concatenate(([V_press[0] / 10], V_press)))[1:]

    def predicted(basis):
        fits, comb = fit_for_basis(tests, basis)
        f = Filtration(C, 0.01, 2.0, MU, comb.resistance_ref, comb.reference_pressure, comb.compressibility,
                       comb.medium_resistance, pressure_basis=basis)
        return ConstantPressure(7e5).curve(f, press_area, V_press[-1] * 1.2).time(V_press), comb

    cake, comb = predicted("cake")
    assert comb.compressibility == pytest.approx(S, abs=0.01)
    assert comb.medium_resistance == pytest.approx(CLOTH, rel=0.01)
    np.testing.assert_allclose(cake, exact, rtol=0.03)
    # the total basis reads the cloth's growing share as compressibility: s far off (the test can tell)
    _, total = fit_for_basis(tests, "total")
    assert abs(total.compressibility - S) > 0.3
