"""Lab squeeze test evaluation: synthetic tests from the exact model recovered, and the classic
square-root-of-time construction as an independent check."""

import numpy as np
import pytest

from server.solver import SolverInputError
from server.solver.expression import terzaghi_average
from server.solver.squeezefit import SqueezeTest, fit_squeeze, initial_slope_estimate

# an invented lab cake: 60 g of solids of 2600 kg/m^3 on 50 cm^2 -> omega = 4.615 mm
MS, RHO_S, AREA = 0.060, 2600.0, 0.005
OMEGA = MS / (RHO_S * AREA)
L0, L_INF = 0.0105, 0.0075  # m: porosity 0.560 -> 0.385
TIMES = np.concatenate([[0.0], np.geomspace(2.0, 3000.0, 40)])


def exact_thickness(t, Ce, B=0.0, eta=0.0, omega_d=OMEGA, L0=L0, L_inf=L_INF):
    """Terzaghi–Voigt written out here on its own (derived here): U_T by 4000 Fourier terms,
    and below T = 0.01, where those are not enough, by sqrt(4 T / pi) (exact there to 1e-13)."""
    T = np.atleast_1d(Ce * np.asarray(t, dtype=float) / omega_d**2)
    M = 0.5 * np.pi * (2 * np.arange(4000) + 1)
    fourier = 1.0 - np.sum(2.0 / M**2 * np.exp(-(M**2) * T[:, None]), axis=1)
    U_T = np.where(T < 0.01, np.sqrt(4 * T / np.pi), fourier)
    U = (1 - B) * U_T + B * (1 - np.exp(-eta * np.asarray(t, dtype=float)))
    return L0 - (L0 - L_inf) * U


def test(values, quantity="thickness", **kw):
    return SqueezeTest(tuple(TIMES), tuple(values), quantity, MS, RHO_S, AREA, **kw)


test.__test__ = False  # a helper, not a test


def test_exact_readings_without_creep_give_the_parameters_back():
    f = fit_squeeze(test(exact_thickness(TIMES, 2.0e-7), creep=False))
    assert f.consolidation_coefficient == pytest.approx(2.0e-7, rel=1e-9)
    assert f.final_thickness == pytest.approx(L_INF, rel=1e-10)
    assert f.initial_thickness == pytest.approx(L0, rel=1e-10)
    assert f.creep_fraction == 0.0 and f.creep_rate == 0.0
    assert f.creep_fraction_stderr is None and f.creep_rate_stderr is None
    assert f.r_squared == pytest.approx(1.0, abs=1e-12)
    # the cake's state from L = omega (1 + e) (derived here)
    assert f.solids_thickness == pytest.approx(OMEGA, rel=1e-15)
    assert f.final_void_ratio == pytest.approx(L_INF / OMEGA - 1, rel=1e-8)
    assert f.final_porosity == pytest.approx(1 - OMEGA / L_INF, rel=1e-8)
    assert f.initial_porosity == pytest.approx(1 - OMEGA / L0, rel=1e-8)


@pytest.mark.parametrize("Ce, B, eta", [(2.0e-7, 0.2, 2e-3), (5.0e-8, 0.1, 1e-2), (8.0e-7, 0.35, 5e-4)])
def test_exact_readings_with_creep_give_the_parameters_back(Ce, B, eta):
    f = fit_squeeze(test(exact_thickness(TIMES, Ce, B, eta)))
    assert f.consolidation_coefficient == pytest.approx(Ce, rel=1e-9)
    assert f.creep_fraction == pytest.approx(B, rel=1e-9)
    assert f.creep_rate == pytest.approx(eta, rel=1e-9)
    assert f.final_thickness == pytest.approx(L_INF, rel=1e-10)
    assert np.max(np.abs(f.residuals)) < 1e-10


def test_noisy_readings_are_recovered_within_their_standard_errors():
    # seeded scatter of 0.3 % of the squeeze (9 um on 3 mm): every parameter within 4 standard
    # errors and within the stated relative tolerance
    rng = np.random.default_rng(20261202)
    Ce, B, eta = 2.0e-7, 0.2, 2e-3
    L = exact_thickness(TIMES, Ce, B, eta) + rng.normal(0.0, 0.003 * (L0 - L_INF), TIMES.size)
    f = fit_squeeze(test(L))
    for value, stderr, true, rel in ((f.consolidation_coefficient, f.consolidation_coefficient_stderr, Ce, 0.05),
                                     (f.creep_fraction, f.creep_fraction_stderr, B, 0.1),
                                     (f.creep_rate, f.creep_rate_stderr, eta, 0.2),
                                     (f.final_thickness, f.final_thickness_stderr, L_INF, 0.01)):
        assert stderr is not None and stderr > 0
        assert abs(value - true) < 4 * stderr
        assert value == pytest.approx(true, rel=rel)
    assert f.final_porosity == pytest.approx(1 - OMEGA / L_INF, abs=4 * f.final_porosity_stderr)
    assert 0.999 < f.r_squared < 1.0
    assert f.residuals.shape == TIMES.shape
    assert np.allclose(f.fitted + f.residuals, L, rtol=0, atol=1e-15)


def test_standard_errors_match_the_scatter_of_repeated_tests():
    # common practice, no source: over 40 seeded repeats the spread of C_e estimates is the
    # standard error the Jacobian gives (within 35 % for 40 samples)
    rng = np.random.default_rng(7)
    clean = exact_thickness(TIMES, 2.0e-7)
    estimates, stderrs = [], []
    for _ in range(40):
        f = fit_squeeze(test(clean + rng.normal(0.0, 0.005 * (L0 - L_INF), TIMES.size), creep=False))
        estimates.append(f.consolidation_coefficient)
        stderrs.append(f.consolidation_coefficient_stderr)
    assert np.std(estimates, ddof=1) == pytest.approx(np.mean(stderrs), rel=0.35)
    assert abs(np.mean(estimates) - 2.0e-7) < 3 * np.std(estimates, ddof=1) / np.sqrt(40)


def test_square_root_of_time_slope_agrees_with_the_fit():
    # the classic construction (from memory: Shirato's expression papers; the same as the
    # sqrt(t) method of soil mechanics, e.g. Das): for U < 0.6, U = sqrt(4 C_e t / (pi omega^2)),
    # so the initial slope of U against sqrt(t) gives C_e. Done here by hand on the readings
    # with U < 0.5, U from the fitted end points.
    rng = np.random.default_rng(3)
    t = np.concatenate([[0.0], np.linspace(1.0, 60.0, 30) ** 2])  # dense at the start
    Ce = 3.0e-7
    L = exact_thickness(t, Ce) + rng.normal(0.0, 0.001 * (L0 - L_INF), t.size)
    f = fit_squeeze(SqueezeTest(tuple(t), tuple(L), "thickness", MS, RHO_S, AREA, creep=False))
    U = (f.initial_thickness - L) / (f.initial_thickness - f.final_thickness)
    early = U < 0.5
    slope = np.polyfit(np.sqrt(t[early]), U[early], 1)[0]
    Ce_by_slope = (slope * OMEGA) ** 2 * np.pi / 4
    assert Ce_by_slope == pytest.approx(f.consolidation_coefficient, rel=0.005)
    assert Ce_by_slope == pytest.approx(Ce, rel=0.01)
    # and the module's own starting estimate does the same construction
    assert initial_slope_estimate(t, L, OMEGA, L_INF - L0) == pytest.approx(Ce, rel=0.05)


def test_expressed_liquid_gives_the_same_squeeze():
    # a saturated cake loses v = A (L_0 - L) of liquid (derived here)
    Ce, B, eta = 2.0e-7, 0.2, 2e-3
    v = AREA * (L0 - exact_thickness(TIMES, Ce, B, eta)) + 3e-6  # the burette read 3 mL at the start
    f = fit_squeeze(test(v, "filtrate", initial_thickness=L0))
    assert f.consolidation_coefficient == pytest.approx(Ce, rel=1e-9)
    assert f.creep_fraction == pytest.approx(B, rel=1e-9)
    assert f.final_thickness == pytest.approx(L_INF, rel=1e-10)
    assert f.offset == pytest.approx(3e-6, rel=1e-6)
    assert f.initial_thickness == L0


def test_two_drained_faces_halve_the_drainage_length():
    # T = C_e t / omega_d^2 with omega_d = omega / 2 for a cake drained on both faces: the same
    # readings read as one-face drainage give four times C_e (Shirato's convention, from memory)
    L = exact_thickness(TIMES, 1.0e-7, omega_d=OMEGA / 2)
    two = fit_squeeze(test(L, creep=False, drained_faces=2))
    one = fit_squeeze(test(L, creep=False, drained_faces=1))
    assert two.consolidation_coefficient == pytest.approx(1.0e-7, rel=1e-9)
    assert one.consolidation_coefficient == pytest.approx(4.0e-7, rel=1e-9)


def test_moisture_of_the_squeezed_cake():
    # moisture = eps rho_l / (eps rho_l + (1 - eps) rho_s) (derived here)
    f = fit_squeeze(test(exact_thickness(TIMES, 2.0e-7), creep=False, liquid_density=1100.0))
    eps = 1 - OMEGA / L_INF
    assert f.final_moisture == pytest.approx(eps * 1100 / (eps * 1100 + (1 - eps) * RHO_S), rel=1e-7)


def test_a_short_test_warns_that_the_end_is_extrapolated():
    short = TIMES[TIMES <= 40.0]
    L = exact_thickness(short, 2.0e-7)
    f = fit_squeeze(SqueezeTest(tuple(short), tuple(L), "thickness", MS, RHO_S, AREA, creep=False))
    assert f.consolidation_at_last == pytest.approx(terzaghi_average(2.0e-7 * short[-1] / OMEGA**2), rel=1e-6)
    assert f.consolidation_at_last < 0.9
    assert any("extrapolated" in w for w in f.warnings)


def test_the_fitted_curve_passes_through_the_fitted_values():
    f = fit_squeeze(test(exact_thickness(TIMES, 2.0e-7, 0.2, 2e-3)))
    assert np.allclose(f.curve(test(exact_thickness(TIMES, 2.0e-7)), TIMES), f.fitted, rtol=0, atol=1e-15)


@pytest.mark.parametrize("change, field", [
    ({"quantity": "height"}, "quantity"),
    ({"dry_solids_mass": 0.0}, "dry_solids_mass"),
    ({"solids_density": float("nan")}, "solids_density"),
    ({"area": -1.0}, "area"),
    ({"drained_faces": 3}, "drained_faces"),
    ({"times": tuple(TIMES[:5]), "values": tuple(exact_thickness(TIMES[:5], 2e-7))}, "readings"),
    ({"values": tuple(exact_thickness(TIMES, 2e-7)[:-1])}, "readings"),
    ({"times": (float("nan"), *TIMES[1:])}, "readings.0.0"),
    ({"times": (-1.0, *TIMES[1:])}, "readings.0.0"),
    ({"times": (*TIMES[:5], TIMES[4], *TIMES[6:])}, "readings.5.0"),
    ({"values": (*exact_thickness(TIMES, 2e-7)[:3], 0.0, *exact_thickness(TIMES, 2e-7)[4:])}, "readings.3.1"),
    ({"values": tuple(exact_thickness(TIMES, 2e-7)[::-1])}, "readings"),
    ({"values": tuple(exact_thickness(TIMES, 2e-7) * 0.4)}, "readings"),  # thinner than the solids
    ({"quantity": "filtrate", "values": tuple(AREA * (L0 - exact_thickness(TIMES, 2e-7)))}, "initial_thickness"),
    ({"quantity": "filtrate", "values": tuple(AREA * (L0 - exact_thickness(TIMES, 2e-7))),
      "initial_thickness": 0.004}, "initial_thickness"),
    ({"quantity": "filtrate", "values": tuple(-AREA * (L0 - exact_thickness(TIMES, 2e-7))),
      "initial_thickness": L0}, "readings"),
])
def test_bad_tests_are_refused_naming_the_field(change, field):
    kw = dict(times=tuple(TIMES), values=tuple(exact_thickness(TIMES, 2e-7)), quantity="thickness",
              dry_solids_mass=MS, solids_density=RHO_S, area=AREA)
    with pytest.raises(SolverInputError) as err:
        SqueezeTest(**{**kw, **change})
    assert err.value.parameter == field


def test_an_equilibrium_below_the_solids_thickness_is_refused():
    # readings that fall towards less than omega: the dry mass or density must be wrong
    L = exact_thickness(TIMES, 2e-7, L0=0.0060, L_inf=0.0040)  # omega is 4.6 mm
    with pytest.raises(SolverInputError) as err:
        fit_squeeze(test(L, creep=False))
    assert err.value.parameter == "readings"
    assert "dry_solids_mass" in err.value.also


def test_readings_that_go_backwards_or_pin_nothing_down_are_warned():
    """A plant engineer's readings with the thickness rising (9.3 -> 9.4 mm) fitted without a
    word; a squeeze only ever thins the cake."""
    clean = fit_squeeze(test(exact_thickness(TIMES, 2e-7, 0.1, 2e-3)))
    assert not any("rises" in w or "loosely" in w for w in clean.warnings)
    L = np.array(exact_thickness(TIMES, 2e-7, 0.1, 2e-3))
    L[len(L) // 2] += 0.1 * (L[0] - L[-1])  # one reading well above the one before it
    bent = fit_squeeze(test(L))
    assert any("thickness rises" in w for w in bent.warnings)


def test_a_reading_far_outside_the_squeeze_is_refused_at_that_reading():
    """A plant engineer's 30 -> 22 mm series with one thickness typed as 355 (mm) was fitted to a
    cake that swells (173 mm at equilibrium, 95.5 % porosity), after 8 s. No reading of a
    squeeze lies further outside its first and last readings than the whole squeeze spans."""
    L = np.array(exact_thickness(TIMES, 2e-7, 0.1, 2e-3))
    span = L[0] - L[-1]
    for k, value in ((20, L[0] + 1.01 * span), (20, L[-1] - 1.01 * span), (7, 10 * L[7])):
        bad = L.copy()
        bad[k] = value
        with pytest.raises(SolverInputError) as err:
            test(bad)
        assert err.value.parameter == f"readings.{k}.1"
        assert f"{value * 1e3:.4g} mm" in err.value.message and "decimal point" in err.value.message
    # within the span (and scatter of a few per cent of it) a reading is fitted, as before
    near = L.copy()
    near[20] = L[19] + 0.05 * span
    assert fit_squeeze(test(near)).final_thickness == pytest.approx(L_INF, rel=0.02)
    # expressed liquid the same way: a reading above the last by more than all the liquid out
    v = AREA * (L0 - L)
    v[30] = v[-1] + 1.5 * (v[-1] - v[0])
    with pytest.raises(SolverInputError) as err:
        test(v, quantity="filtrate", initial_thickness=L0)
    assert err.value.parameter == "readings.30.1" and " mL " in err.value.message


@pytest.mark.parametrize("creep", [False, True])
def test_a_fit_that_would_swell_the_cake_is_refused(creep):
    # readings within the squeeze's span that rise after the first and fall only at the last
    # (constructed here): least squares follows the rise, to an equilibrium thicker than the
    # start, which is not a squeeze: refused, no porosity or C_e for the cycle
    y = np.concatenate([[L0], np.linspace(L0 + 0.1 * (L0 - L_INF), L0 + 0.95 * (L0 - L_INF), TIMES.size - 2),
                        [L_INF]])
    with pytest.raises(SolverInputError) as err:
        fit_squeeze(test(y, creep=creep))
    assert err.value.parameter.startswith("readings.") and err.value.parameter.endswith(".1")
    assert "would swell" in err.value.message


def test_an_early_stopping_start_does_not_hide_the_exact_fit():
    # a review's case: 12 readings to 1800 s on a geometric grid, with creep; when only the best
    # short search carried on, a start that had converged early to a worse fit won
    # (C_e 3.66e-10 m²/s for the exact 1e-9). Exact readings (Terzaghi–Voigt written out here)
    t = np.concatenate(([0.0], np.geomspace(2.0, 1800.0, 11)))
    f = fit_squeeze(SqueezeTest(tuple(t), tuple(exact_thickness(t, 1e-9, 0.2, 2e-3)), "thickness", MS, RHO_S, AREA))
    assert f.consolidation_coefficient == pytest.approx(1e-9, rel=1e-4)
