"""Washing quality against a numerical solution of the advection–dispersion equation, its
limits and the stage-wise efficiency rule."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.sparse import diags

from server.solver import SolverInputError
from server.solver.washquality import WashModel, exit_concentration


def washate_by_method_of_lines(Dn, W_out):
    """c_R at x = 1 from a numerical solution of dc/dW + dc/dx = (1/D_n) d2c/dx2 on a long
    domain 0 <= x <= X (x in cake thicknesses, W in pore volumes): wash at the face, c(0) = 0;
    cake liquor everywhere at first, c(x, 0) = 1; far end dc/dx = 0, so far that the wash
    front never reaches it (common practice, no source: second-order central differences,
    BDF in time)."""
    W_max = W_out[-1]
    X = 1.0 + W_max + 12.0 * np.sqrt(W_max / Dn) + 2.0
    h = min(0.01, 0.25 / Dn)  # cell Peclet number h D_n <= 0.25: central differences stay monotone
    n = int(round(X / h))
    # unknowns c_1 .. c_n (c_0 = 0); the far end mirrors, c_{n+1} = c_{n-1}
    d = 1.0 / (Dn * h * h)
    a = 1.0 / (2.0 * h)
    lower = np.full(n - 1, d + a)
    upper = np.full(n - 1, d - a)
    lower[-1] = 2.0 * d
    A = diags([lower, np.full(n, -2.0 * d), upper], [-1, 0, 1], format="csc")
    sol = solve_ivp(lambda W, c: A @ c, (0.0, W_max), np.ones(n), method="BDF", jac=A, t_eval=W_out,
                    rtol=1e-8, atol=1e-11)
    assert sol.success
    exit_node = int(round(1.0 / h)) - 1  # x = 1 is node 1/h, stored at index 1/h - 1
    return sol.y[exit_node]


@pytest.mark.parametrize("Dn", [0.5, 2.0, 10.0, 100.0])
def test_exit_concentration_against_the_advection_dispersion_equation(Dn):
    # the Ogata–Banks solution (Ogata & Banks, USGS Professional Paper 411-A, 1961: from
    # memory) is the semi-infinite problem solved numerically here
    W = np.linspace(0.05, 3.0, 60)
    numeric = washate_by_method_of_lines(Dn, W)
    assert np.max(np.abs(exit_concentration(W, Dn) - numeric)) < 3e-4


@pytest.mark.parametrize("Dn", [0.5, 2.0, 10.0, 100.0])
def test_removal_is_the_integral_of_the_numerical_washate(Dn):
    # F(W) = integral of c_R dW' (solute leaving with the washate, in pore volumes of liquor)
    W = np.linspace(0.0, 3.0, 601)
    numeric = washate_by_method_of_lines(Dn, W[1:])
    c = np.concatenate([[1.0], numeric])
    F_numeric = np.concatenate([[0.0], np.cumsum(0.5 * (c[1:] + c[:-1]) * np.diff(W))])
    model = WashModel("dispersion", dispersion_number=Dn)
    checks = np.array([0.5, 1.0, 1.5, 2.0, 3.0])
    idx = np.searchsorted(W, checks)
    assert np.allclose(model.removal(checks), F_numeric[idx], rtol=0, atol=1e-3)


@pytest.mark.parametrize("Dn", [0.3, 1.0, 5.0, 50.0])
def test_all_the_solute_leaves_eventually(Dn):
    # derived here: the washate carries out exactly the solute of one pore volume in the end
    model = WashModel("dispersion", dispersion_number=Dn)
    assert model.removal(2000.0 / min(Dn, 1.0)) == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("Dn", [0.3, 5.0, 50.0, 500.0, 1e4])
def test_removal_never_falls_as_more_wash_goes_through(Dn):
    # common practice, no source: F is an integral of c_R >= 0, so it cannot fall with W;
    # over 0.01 .. 10,000 pore volumes (the range wash_ratio_for searches)
    W = np.geomspace(0.01, 1e4, 120)
    F = WashModel("dispersion", dispersion_number=Dn).removal(W)
    assert np.all(np.diff(F) >= -1e-13)  # the integrator's absolute accuracy (epsabs)
    assert F[-1] == pytest.approx(1.0, abs=1e-12)


def test_plug_flow_removes_one_pore_volume_per_pore_volume():
    # domain primer (Wakeman & Tarleton; Svarovsky): D_n -> infinity is plug flow, F = W up to
    # W = 1, then everything is out
    plug = WashModel("dispersion", dispersion_number=1e4)
    W = np.array([0.1, 0.3, 0.5, 0.7, 0.9])
    assert np.allclose(plug.removal(W), W, rtol=0, atol=1e-12)
    assert plug.removal(1.2) == pytest.approx(1.0, abs=1e-9)
    assert plug.removal(3.0) == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("Dn", [100.0, 1000.0, 1e4])
def test_breakthrough_loss_shrinks_as_one_over_root_pi_dn(Dn):
    # derived here (leading order of the Ogata–Banks solution at W = 1): the solute still in
    # the cake when one pore volume has passed is 1/sqrt(pi D_n)
    model = WashModel("dispersion", dispersion_number=Dn)
    assert 1.0 - model.removal(1.0) == pytest.approx(1.0 / np.sqrt(np.pi * Dn), rel=0.01)


def test_exit_concentration_starts_at_one_and_stays_between_0_and_1():
    W = np.linspace(0.0, 10.0, 1001)
    for Dn in (0.01, 1.0, 100.0, 1e4):
        c = exit_concentration(W, Dn)
        assert c[0] == 1.0
        assert np.all((c >= 0.0) & (c <= 1.0))
        assert np.all(np.diff(c) <= 1e-15)  # the washate only gets cleaner
    assert isinstance(exit_concentration(0.5, 2.0), float)


@pytest.mark.reference
def test_efficiency_rule_leaves_nine_percent_after_two_pore_volumes():
    # Choudhury & Dahlstrom's stage-wise rule as in Perry's (from memory) and issue 15's check:
    # E = 0.7, N = 2 -> R = (1 - 0.7)^2 = 0.09 remaining
    model = WashModel("efficiency", efficiency=0.7)
    assert 1.0 - model.removal(2.0) == pytest.approx(0.09, rel=1e-12)
    assert 1.0 - model.removal(1.0) == pytest.approx(0.3, rel=1e-12)
    # non-whole pore volumes follow the same exponential
    assert 1.0 - model.removal(2.5) == pytest.approx(0.3**2.5, rel=1e-12)


@pytest.mark.parametrize("model", [
    WashModel("dispersion", dispersion_number=0.5),
    WashModel("dispersion", dispersion_number=2.0),
    WashModel("dispersion", dispersion_number=20.0),
    WashModel("dispersion", dispersion_number=500.0),
    WashModel("dispersion", dispersion_number=1e4),
    WashModel("efficiency", efficiency=0.35),
    WashModel("efficiency", efficiency=0.9),
], ids=lambda m: f"{m.model}-{m.dispersion_number or m.efficiency}")
def test_wash_ratio_for_meets_its_target(model):
    for target in (0.2, 0.5, 0.9, 0.95, 0.99, 0.999):
        W = model.wash_ratio_for(target)
        assert W > 0
        assert model.removal(W) == pytest.approx(target, abs=1e-12)


@pytest.mark.parametrize("removal", [0.0, 1.0, -0.2, 1.5, float("nan")])
def test_wash_ratio_for_refuses_an_impossible_target(removal):
    with pytest.raises(SolverInputError) as err:
        WashModel("efficiency", efficiency=0.5).wash_ratio_for(removal, field="wash_target.solute_removal")
    assert err.value.parameter == "wash_target.solute_removal"


def test_wash_ratio_for_says_when_the_cake_cannot_be_washed_in_reason():
    with pytest.raises(SolverInputError, match="more than 10,000 pore volumes"):
        WashModel("dispersion", dispersion_number=1e-3).wash_ratio_for(0.99)


@pytest.mark.parametrize("kw, field", [
    ({"model": "plug"}, "model"),
    ({"model": "dispersion"}, "dispersion_number"),
    ({"model": "dispersion", "dispersion_number": 0.0}, "dispersion_number"),
    ({"model": "dispersion", "dispersion_number": 2e4}, "dispersion_number"),
    ({"model": "dispersion", "dispersion_number": float("nan")}, "dispersion_number"),
    ({"model": "efficiency"}, "efficiency"),
    ({"model": "efficiency", "efficiency": 1.0}, "efficiency"),
    ({"model": "efficiency", "efficiency": float("nan")}, "efficiency"),
])
def test_wash_model_refuses_bad_settings_naming_the_field(kw, field):
    with pytest.raises(SolverInputError) as err:
        WashModel(**kw)
    assert err.value.parameter == field


@pytest.mark.parametrize("model", [WashModel("dispersion", dispersion_number=3.0),
                                   WashModel("efficiency", efficiency=0.6)], ids=["dispersion", "efficiency"])
def test_profile_concentration_is_the_rate_of_removal(model):
    # the chart's two curves are consistent: removal is the integral of the washate curve
    p = model.profile(4.0, n=801)
    W, c, F = p["wash_ratio"], p["concentration"], p["removal"]
    assert W[0] == 0.0 and W[-1] == 4.0
    F_trapezoid = np.concatenate([[0.0], np.cumsum(0.5 * (c[1:] + c[:-1]) * np.diff(W))])
    assert np.max(np.abs(F - F_trapezoid)) < 2e-5


def test_the_efficiency_rule_never_removes_more_than_the_wash_carries():
    """(1 - E)^N for fractional N < 1 would remove more than plug flow can for E > 1 - 1/e (a
    reviewer's finding): W pore volumes carry out at most W of the liquor (mass balance)."""
    m = WashModel("efficiency", efficiency=0.95)
    assert m.removal(0.3) == pytest.approx(0.3, rel=1e-15)
    assert m.wash_ratio_for(0.6) == pytest.approx(0.6, rel=1e-15)
    assert m.removal(2.0) == pytest.approx(1 - 0.05**2, rel=1e-15)  # the rule where it is below W
    prof = m.profile(3.0)
    assert max(prof["concentration"]) <= 1.0
