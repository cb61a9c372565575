"""Unit parsing at the edge, against pint and NIST SP 811 exact conversions."""

import pint
import pytest

from server.units import KINDS, UnitError, parse_quantity

UREG = pint.UnitRegistry()


@pytest.mark.reference
@pytest.mark.parametrize(
    "text,kind,si",
    [
        # NIST SP 811 (2008), appendix B: exact by definition.
        ("1 atm", "pressure", 101325.0),
        ("1 bar", "pressure", 1e5),
        ("1 ft", "length", 0.3048),
        ("1 in", "length", 0.0254),
        ("1 ft^2", "area", 0.09290304),
        ("1 ft^3", "volume", 0.028316846592),
        ("1 gal", "volume", 3.785411784e-3),  # US gallon = 231 in^3 exactly
        ("1 lb", "mass", 0.45359237),
        ("1 cP", "viscosity", 1e-3),
        ("1 h", "time", 3600.0),
        ("1 L", "volume", 1e-3),
        ("32 degF", "temperature", 273.15),
        ("212 degF", "temperature", 373.15),
    ],
)
def test_exact_conversions_of_nist_sp_811(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


@pytest.mark.reference
def test_psi_matches_nist_sp_811():
    # NIST SP 811: 1 psi = 6.894 757 E+03 Pa (lbf/in^2 from exact lb, ft and g_n).
    assert parse_quantity("1 psi", "pressure") == pytest.approx(6894.757, rel=1e-7)
    # NIST SP 811 (2008 ed.), Appendix B.8: 1 atm = 1.013 25 E+05 Pa (exact) and
    # 1 lbf/ft^2 = 4.788 026 E+01 Pa, so 2 atm = 202 650 / 47.880 26 = 4232.4 lbf/ft^2
    ratio = parse_quantity("2 atm", "pressure") / parse_quantity("1 lbf/ft^2", "pressure")
    assert ratio == pytest.approx(4232.4, rel=2e-5)


@pytest.mark.parametrize(
    "text,kind,unit",
    [
        ("5 bar", "pressure", "Pa"), ("6.7 psi", "pressure", "Pa"), ("338 kN/m^2", "pressure", "Pa"),
        ("32 mm", "length", "m"), ("440 cm^2", "area", "m^2"), ("250 mL", "volume", "m^3"),
        ("25 min", "time", "s"), ("23.5 g/L", "density", "kg/m^3"), ("1.5e11 m/kg", "specific_resistance", "m/kg"),
        ("2e11 ft/lb", "specific_resistance", "m/kg"), ("3e9 1/ft", "medium_resistance", "1/m"),
        ("30 m^3/h", "flow", "m^3/s"), ("1.2 mPa*s", "viscosity", "Pa*s"), ("62.4 lb/ft^3", "density", "kg/m^3"),
    ],
)
def test_parsing_agrees_with_pint(text, kind, unit):
    assert parse_quantity(text, kind) == pytest.approx(UREG.Quantity(text).to(unit).magnitude, rel=1e-12)


@pytest.mark.parametrize(
    "text,kind,si",
    [("12 %", "fraction", 0.12), ("12 wt%", "fraction", 0.12), ("1 m²", "area", 1.0),
     ("1 mPa·s", "viscosity", 1e-3), ("20 °C", "temperature", 293.15), ("30 m3/h", "flow", 30 / 3600),
     ("5 barg", "pressure", 5e5), (" 7.5e5   Pa ", "pressure", 7.5e5), ("0.12", "fraction", 0.12)],
)
def test_engineering_spellings_are_read(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


def test_bare_numbers_are_si_except_temperature_in_celsius():
    assert parse_quantity(5e5, "pressure") == 5e5
    assert parse_quantity(20, "temperature") == pytest.approx(293.15)


@pytest.mark.parametrize(
    "value,kind,fragment",
    [("5 kg", "pressure", "not a unit of pressure"), ("5 blorp", "pressure", "unknown unit"),
     ("bar", "pressure", "could not read"), ("1e999 Pa", "pressure", "finite"), (True, "pressure", "expected"),
     ("1" * 80, "pressure", "at most"), ("3 m", "area", "not a unit of area")],
)
def test_bad_quantities_get_plain_messages(value, kind, fragment):
    with pytest.raises(UnitError, match=fragment):
        parse_quantity(value, kind)


# --- numbers as engineers type them (issue 10) -------------------------------------------
# The separators are the usual written conventions (common practice, no source): a decimal
# point or comma; digits grouped in threes by spaces, thin or no-break spaces, apostrophes,
# or by the separator that is not the decimal one.
ACCEPTED = [
    ("1.5", 1.5, ""), ("1,5", 1.5, ""), (".5", 0.5, ""), (",5", 0.5, ""), ("-3,5 degC", -3.5, "degC"),
    ("+2e-3", 0.002, ""), ("1.2e11", 1.2e11, ""), ("1,2E11 m/kg", 1.2e11, "m/kg"),
    ("19 000", 19000.0, ""), ("19\u2009000 cm^2", 19000.0, "cm^2"), ("19\u202f000", 19000.0, ""),
    ("19\u00a0000", 19000.0, ""), ("19'000", 19000.0, ""), ("1 500 000,25 Pa", 1500000.25, "Pa"),
    ("19 000.5 m", 19000.5, "m"), ("1 500,5", 1500.5, ""),
    ("19.000,5", 19000.5, ""), ("19,000.5", 19000.5, ""), ("1.500.000", 1.5e6, ""), ("1,500,000", 1.5e6, ""),
    ("1.234.567,89", 1234567.89, ""),
    ("19.000", 19.0, ""),  # a single dot is always the decimal point, as the API has always read it
    ("0,500", 0.5, ""),  # "0,500" cannot be grouping (a leading zero group): decimal comma
    ("1,50", 1.5, ""), ("1,5000", 1.5, ""),
    ("5 1/m", 5.0, "1/m"), ("2 000 1/m", 2000.0, "1/m"), ("1e10 1/m", 1e10, "1/m"), ("2 atm", 2.0, "atm"),
    ("12 %", 12.0, "%"), ("12%", 12.0, "%"),
    ("1.2×10^11 m/kg", 1.2e11, "m/kg"), ("1,2 x 10^11", 1.2e11, ""), ("1.2*10**11", 1.2e11, ""),
]
AMBIGUOUS = ["19,000", "1,500", "999,999 Pa", "1,000e3", "-19,000"]
REFUSED = ["abc", "", "25,32,40", "1,5,5", "1.5.5", "1 000,000.5", "1.000,000,5", "19'000,000.5"]


@pytest.mark.parametrize("text, number, unit", ACCEPTED)
def test_split_number_reads_what_engineers_type(text, number, unit):
    from server.units import split_number

    got, rest = split_number(text)
    assert got == pytest.approx(number, rel=1e-15) and rest == unit


@pytest.mark.parametrize("text", AMBIGUOUS)
def test_split_number_asks_when_a_comma_reads_two_ways(text):
    from server.units import AmbiguousNumber, split_number

    with pytest.raises(AmbiguousNumber) as err:
        split_number(text)
    head, tail = text.split(" ")[0].split("e")[0].split(",")  # the sign stays with the head
    assert f"{head} {tail} or {head}.{tail}" in str(err.value)


@pytest.mark.parametrize("text", REFUSED)
def test_numbers_it_cannot_read_are_refused(text):
    with pytest.raises(UnitError):
        parse_quantity(f"{text} mm", "length")


def test_typed_numbers_reach_si_through_parse_quantity():
    assert parse_quantity("19 000 cm^2", "area") == pytest.approx(1.9)
    assert parse_quantity("1,2E11 m/kg", "specific_resistance") == pytest.approx(1.2e11)
    assert parse_quantity("0,58 %", "fraction") == pytest.approx(0.0058)
    with pytest.raises(UnitError, match="reads two ways"):
        parse_quantity("19,000 cm^2", "area")


@pytest.mark.parametrize("text, kind, si", [
    # NIST SP 811 (2008), B.9: short ton = 2000 lb = 907.184 74 kg; gallon (U.S.) = 231 in³ = 3.785 411 784 L
    ("80 short ton/day", "mass_rate", 80 * 907.18474 / 86400),
    ("2 long ton/day", "mass_rate", 2 * 2240 * 0.45359237 / 86400),
    ("120 US gpm", "flow", 120 * 3.785411784e-3 / 60),
    ("3 US gal", "volume", 3 * 3.785411784e-3),
    ("36 US gal/(ft²·h)", "flux", 36 * 3.785411784e-3 / 0.3048**2 / 3600),
    # written out in full too ("US gallon" was read as "gallonlon": a review)
    ("2 US gallons/day", "flow", 2 * 3.785411784e-3 / 86400),
    ("1 US gallon/min", "flow", 3.785411784e-3 / 60),
])
def test_us_units_as_the_pages_write_them_are_read(text, kind, si):
    assert parse_quantity(text, kind) == pytest.approx(si, rel=1e-12)


#: the input kind of each displayed quantity (display.DISPLAY) that people also type
TYPED_AS = {"time": "time", "volume": "volume", "volume_small": "volume", "flow": "flow", "flux": "flux",
            "mass": "mass", "mass_rate": "mass_rate", "mass_per_day": "mass_rate", "thickness": "length",
            "pressure": "pressure", "area": "area", "density": "density", "viscosity": "viscosity",
            "specific_resistance": "specific_resistance", "medium_resistance": "medium_resistance",
            "percent": "fraction"}


@pytest.mark.parametrize("system", ["si", "us"])
@pytest.mark.parametrize("quantity", sorted(TYPED_AS))
def test_every_unit_the_pages_show_can_be_typed_back(quantity, system):
    """A figure copied from a results page with its unit reads back as the SI value shown."""
    from server.display import DISPLAY, Units

    shown = Units(system)(quantity, 1.0)  # 1 SI unit in the page's unit
    text = f"{shown!r} {DISPLAY[quantity][system].label}"
    assert parse_quantity(text, TYPED_AS[quantity]) == pytest.approx(1.0, rel=1e-12)


def test_units_are_written_as_people_write_them_and_read_back():
    # one spelling for the pages and the API's messages (refusals, flags, the menus' fallback);
    # every written form is read back by the parser to the same value
    from server.units import parse_quantity, written

    assert written("kg/m**3") == "kg/m³" and written("mPa*s") == "mPa·s" and written("degF") == "°F"
    assert written("cm2") == "cm²" and written("L/(m^2*h)") == "L/(m²·h)"
    for text, kind in (("1.5 kg/m**3", "density"), ("0.9 mPa*s", "viscosity"), ("68 degF", "temperature"),
                       ("50 cm^2", "area"), ("2.5 m2", "area"), ("150 L/(m^2*h)", "flux")):
        number, unit = text.split(" ")
        assert parse_quantity(f"{number} {written(unit)}", kind) == parse_quantity(text, kind)


@pytest.mark.parametrize("kind", sorted(KINDS))
def test_the_examples_messages_give_are_written_as_people_write_them_and_read_back(kind):
    # a refusal's "such as ..." is copied into a field or a request: each quoted example reads
    import re

    from server.units import example, parse_quantity

    text = example(kind)
    assert not re.search(r"degC|degF|\^|\*", text), text
    quoted = re.findall(r'"([^"]+)"', text)
    assert quoted
    for q in quoted:
        parse_quantity(q, kind)
