"""Display units (server/display.py) against the exact definitions of the units.

Sources: NIST Handbook 44 (2023 ed.), Appendix C (inch = 2.54 cm exactly; US gallon = 231 in³
exactly; avoirdupois pound = 0.453 592 37 kg exactly); NIST SP 811 (2008 ed.), Appendix B.8
(psi = 6.894 757 E+03 Pa; bar = 1E+05 Pa).
"""

import pytest

from server.display import DISPLAY, SI_OF, SYSTEMS, Units

INCH = 0.0254
FOOT = 12 * INCH
GALLON = 231 * INCH**3
POUND = 0.45359237


@pytest.mark.reference
@pytest.mark.parametrize("quantity,system,si_value,shown", [
    ("time", "si", 60.0, 1.0),
    ("thickness", "si", 0.032, 32.0),
    ("thickness", "us", INCH, 1.0),
    ("pressure", "si", 1e5, 1.0),
    ("pressure", "us", 6894.757293168, 1.0),
    ("flow", "si", 1 / 3600, 1.0),
    ("flow", "us", GALLON / 60, 1.0),
    ("volume", "us", FOOT**3, 1.0),
    ("area", "us", FOOT**2, 1.0),
    ("mass", "us", POUND, 1.0),
    ("mass_rate", "si", 1 / 3600, 1.0),
    ("mass_per_day", "si", 1000 / 86400, 1.0),
    ("mass_per_day", "us", 2000 * POUND / 86400, 1.0),
    ("density", "us", POUND / FOOT**3, 1.0),
    ("viscosity", "si", 1e-3, 1.0),
    ("viscosity", "us", 1e-3, 1.0),
    ("specific_resistance", "us", FOOT / POUND, 1.0),
    ("medium_resistance", "us", 1 / FOOT, 1.0),
    ("percent", "si", 0.25, 25.0),
])
def test_si_values_show_in_the_display_unit(quantity, system, si_value, shown):
    assert Units(system)(quantity, si_value) == pytest.approx(shown, rel=1e-9)


def test_lists_and_missing_values_convert_element_by_element():
    u = Units("si")
    assert u("thickness", [0.01, None, 0.04]) == pytest.approx([10.0, None, 40.0])
    assert u("pressure", None) is None


def test_every_quantity_has_a_label_in_each_system_and_an_si_unit():
    assert set(DISPLAY) == set(SI_OF)
    for quantity in DISPLAY:
        for system in SYSTEMS:
            assert Units(system).label(quantity)
            assert Units(system)(quantity, 1.0) > 0


def test_an_unknown_system_shows_si():
    assert Units("xx").system == "si"


def test_a_solvers_message_reads_in_the_pages_units():
    # the solver writes its warnings in metric; a page in US units showed "(80 m³/h)" (a
    # plant-engineer check). psi = lbf/in², lbf = lb x standard gravity 9.80665 m/s² (NIST SP 811)
    from server.views import fmt

    PSI = POUND * 9.80665 / INCH**2
    gpm = 80 / 3600 / GALLON * 60  # 80 m³/h in US gal/min
    message = "The pump curve starts at 80 m³/h: below that flow the pump is taken to run at 7 bar (0.02222 m³/s)."
    us = Units("us").text(message)
    assert us == (f"The pump curve starts at {gpm:.4g} US gpm: below that flow the pump is taken to run at "
                  f"{7e5 / PSI:.4g} psi (0.02222 m³/s)."), us
    assert Units("si").text(message) == message
    # each unit the solver writes, longer spellings first, figures written as the pages write them
    assert Units("us").text("a cake of 25 mm, 1.2e+11 m/kg, 1.5e10 1/m, 4150 kg/m³, 150 m², 3.2 m³, 12000 kg") == (
        f"a cake of {fmt(0.025 / INCH, 4)} in, {fmt(1.2e11 * POUND / FOOT, 4)} ft/lb, {fmt(1.5e10 * FOOT, 4)} 1/ft, "
        f"{fmt(4150 * FOOT**3 / POUND, 4)} lb/ft³, {fmt(150 / FOOT**2, 4)} ft², {fmt(3.2 / FOOT**3, 4)} ft³, "
        f"{fmt(12000 / POUND, 4)} lb")
    assert "×10¹¹ ft/lb" in Units("us").text("1.2E+11 m/kg") and "26,455 lb" in Units("us").text("12000 kg")
    # a range converts at both ends (the tested-pressure warning wrote "3 to 58.02 psi": a review)
    assert Units("us").text("the lab tests' pressures (3 to 4 bar)") == (
        f"the lab tests' pressures ({3e5 / PSI:.4g} to {4e5 / PSI:.4g} psi)")
    assert Units("us").text("3–20 bar") == f"{3e5 / PSI:.4g}–{fmt(20e5 / PSI, 4)} psi"
    # words, other units and numbers grouped in thousands are left as written, never half-converted
    for text in ("8 barrels, 3 mmol, 2 kgf, v2.5 bar, 40 min, 12 %", "1,500 kg/m³", "19 000 kg", "5 m³/s"):
        assert Units("us").text(text) == text


def test_temperatures_show_in_celsius_or_fahrenheit():
    """°F = 1.8 × °C + 32 (NIST SP 811, B.9): water freezes at 32 °F and boils at 212 °F; −40 is both."""
    from server.display import Units

    kelvin = [273.15, 373.15, 233.15]
    assert [Units("si").temperature(k) for k in kelvin] == pytest.approx([0.0, 100.0, -40.0], abs=1e-12)
    assert [Units("us").temperature(k) for k in kelvin] == pytest.approx([32.0, 212.0, -40.0], abs=1e-12)
    assert (Units("si").temperature_label, Units("us").temperature_label) == ("°C", "°F")


def test_a_standard_error_is_written_to_two_figures_at_any_size():
    # the press log's plant fit showed "2.00×10¹¹ ± 424,809 m/kg" (a plant-engineer check)
    from server.views import fmt_error

    assert fmt_error(424809.3) == "4.2×10⁵" and fmt_error(4.24e10) == "4.2×10¹⁰"
    assert fmt_error(87.6) == "88" and fmt_error(0.01234) == "0.012" and fmt_error(3.0) == "3.0"
    assert fmt_error(None) == "–" and fmt_error(0.0) == "0"
    # rounded before the form is chosen: 99.6 reads as 100 does, 9.96 as 10 (a review)
    assert fmt_error(99.6) == fmt_error(100.0) == "1.0×10²" and fmt_error(9.96) == "10"


def test_a_temperature_is_written_to_a_tenth_of_a_degree():
    # the plan's seasons read "8.00 °C" (three figures of a number below ten: a plant-engineer check)
    from server.views import fmt_degrees

    assert fmt_degrees(281.15 - 273.15) == "8" and fmt_degrees(46.4) == "46.4" and fmt_degrees(-0.04) == "0"
    assert fmt_degrees(-12.26) == "-12.3" and fmt_degrees(1832.0) == "1,832" and fmt_degrees(None) == "–"
