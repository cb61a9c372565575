"""Air blowing: a lab blow curve scaled to the press cake by the square of the thickness ratio."""

import numpy as np
import pytest

from server.solver import SolverInputError
from server.solver.blowing import Blow

# an invented lab blow curve: 25 mm cake, moisture (liquid / wet cake) against blow time
TIMES = (0.0, 30.0, 60.0, 120.0, 240.0, 480.0)
MOISTURES = (0.32, 0.27, 0.245, 0.22, 0.205, 0.2)
LAB = 0.025


def blow(**kw):
    return Blow(**{**dict(times=TIMES, moistures=MOISTURES, lab_thickness=LAB), **kw})


def test_lab_cake_reads_the_lab_curve():
    b = blow()
    assert np.allclose(b.moisture_after(np.array(TIMES), LAB), MOISTURES, rtol=0, atol=1e-15)
    assert b.lowest_moisture == 0.2


def test_press_cake_takes_the_square_of_the_thickness_ratio():
    # domain primer (Wakeman's dimensionless blow time ~ t / L^2, Wakeman & Tarleton): the same
    # cake twice as thick reaches each moisture in four times the time; 1.5x thicker in 2.25x
    b = blow()
    t_lab = np.array([10.0, 45.0, 90.0, 200.0, 400.0])
    lab = b.moisture_after(t_lab, LAB)
    assert np.allclose(b.moisture_after(4.0 * t_lab, 2 * LAB), lab, rtol=0, atol=1e-15)
    assert np.allclose(b.moisture_after(2.25 * t_lab, 1.5 * LAB), lab, rtol=0, atol=1e-15)
    assert np.allclose(b.moisture_after(0.25 * t_lab, 0.5 * LAB), lab, rtol=0, atol=1e-15)
    # vectorised over thickness too
    L = np.array([0.02, 0.03, 0.04])
    assert np.allclose(b.moisture_after(60.0 * (L / LAB) ** 2, L), 0.245, rtol=0, atol=1e-15)


def test_moisture_is_linear_between_lab_points():
    # common practice, no source: straight lines between measured points
    b = blow()
    assert b.moisture_after(15.0, LAB) == pytest.approx(0.295, abs=1e-15)
    assert b.moisture_after(90.0, LAB) == pytest.approx(0.2325, abs=1e-15)
    assert b.moisture_after(360.0, 2 * LAB) == pytest.approx(0.2325, abs=1e-15)  # 90 s on the lab cake


def test_moisture_is_never_extrapolated_past_the_curve():
    b = blow()
    assert b.moisture_after(1e6, LAB) == 0.2
    assert b.moisture_after(480.0 * 4 + 1.0, 2 * LAB) == 0.2


def test_time_to_inverts_moisture_after():
    b = blow()
    for L in (0.015, LAB, 0.04):
        m = np.linspace(0.2, 0.32, 41)
        t = b.time_to(m, L)
        assert np.allclose(b.moisture_after(t, L), m, rtol=0, atol=1e-14)
        assert np.all(np.diff(t) <= 0)  # drier takes longer


def test_time_to_scales_with_the_square_of_thickness():
    b = blow()
    assert b.time_to(0.245, LAB) == pytest.approx(60.0, rel=1e-14)
    assert b.time_to(0.245, 2 * LAB) == pytest.approx(240.0, rel=1e-14)
    assert b.time_to(0.2325, 0.0125) == pytest.approx(90.0 / 4, rel=1e-14)


def test_time_to_takes_the_start_of_a_flat_stretch():
    # the first time the moisture is reached, not the last
    b = blow(times=(0.0, 60.0, 120.0, 180.0), moistures=(0.3, 0.25, 0.25, 0.2))
    assert b.time_to(0.25, LAB) == pytest.approx(60.0, rel=1e-14)
    assert b.time_to(0.3, LAB) == 0.0


def test_time_to_a_moisture_the_cake_already_has_is_zero():
    b = blow()
    assert b.time_to(0.32, LAB) == 0.0
    assert b.time_to(0.35, 0.05) == 0.0


def test_blow_time_or_target_and_free():
    assert blow().free
    assert not blow(time=120.0).free
    assert not blow(target_moisture=0.21).free


@pytest.mark.parametrize("kw, field", [
    ({"times": (0.0,), "moistures": (0.3,)}, "curve"),
    ({"times": (0.0, 10.0, 20.0), "moistures": (0.3, 0.2)}, "curve"),
    ({"times": (-5.0, 10.0), "moistures": (0.3, 0.2)}, "curve.0.0"),
    ({"times": (0.0, 10.0, 10.0), "moistures": (0.3, 0.25, 0.2)}, "curve.2.0"),
    ({"times": (0.0, 20.0, 10.0), "moistures": (0.3, 0.25, 0.2)}, "curve.2.0"),
    ({"times": (0.0, 10.0), "moistures": (0.3, 0.0)}, "curve.1.1"),
    ({"times": (0.0, 10.0), "moistures": (1.0, 0.3)}, "curve.0.1"),
    ({"times": (0.0, 10.0, 20.0), "moistures": (0.3, 0.2, 0.25)}, "curve.2.1"),
    ({"lab_thickness": 0.0}, "lab_thickness"),
    ({"lab_thickness": float("nan")}, "lab_thickness"),
    ({"time": 60.0, "target_moisture": 0.21}, "time"),
    ({"time": 0.0}, "time"),
    ({"target_moisture": 0.19}, "target_moisture"),
    ({"target_moisture": 1.0}, "target_moisture"),
])
def test_blow_refuses_bad_curves_naming_the_field(kw, field):
    with pytest.raises(SolverInputError) as err:
        blow(**kw)
    assert err.value.parameter == field


@pytest.mark.parametrize("times, moistures", [
    ((0.0, float("nan"), 20.0), (0.3, 0.25, 0.2)),
    ((0.0, 10.0, float("inf")), (0.3, 0.25, 0.2)),
    ((0.0, 10.0, 20.0), (0.3, float("nan"), 0.2)),
])
def test_blow_refuses_a_curve_with_a_missing_number(times, moistures):
    with pytest.raises(SolverInputError) as err:
        blow(times=times, moistures=moistures)
    assert err.value.parameter.startswith("curve")


def test_blow_names_the_point_with_the_missing_number():
    with pytest.raises(SolverInputError) as err:
        blow(times=(0.0, 10.0, 20.0), moistures=(0.3, 0.25, float("nan")))
    assert err.value.parameter == "curve.2.1"


def test_a_curve_that_starts_late_or_never_dries_is_refused():
    # a first reading after 0 s would charge dead blow time (a reviewer's finding), and a curve
    # whose moisture never falls would let a blow of no time "meet" any moisture: both refused
    with pytest.raises(SolverInputError) as late:
        blow(times=(20.0, 60.0, 120.0), moistures=(0.3, 0.25, 0.22))
    assert late.value.parameter == "curve.0.0"
    with pytest.raises(SolverInputError) as flat:
        blow(times=(0.0, 60.0), moistures=(0.3, 0.3))
    assert flat.value.parameter == "curve.1.1"
