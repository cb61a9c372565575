"""Squeeze-test readings from CSV text with units in the header (labdata.parse_squeeze_readings)."""

import pytest

from server.labdata import CsvError, parse_squeeze_readings


def test_thickness_readings_in_minutes_and_millimetres():
    r = parse_squeeze_readings("time [min], thickness [mm]\n0, 10.2\n0.5, 9.8\n")
    assert r.measured == "thickness"
    assert r.points == [(0.0, pytest.approx(0.0102)), (30.0, pytest.approx(0.0098))]
    assert r.units == {"time": "min", "thickness": "mm"}


def test_expressed_liquid_with_semicolons_and_a_decimal_comma():
    r = parse_squeeze_readings("time [s]; filtrate [mL]; note\n0; 0; start\n30; 4,5; -\n")
    assert r.measured == "filtrate"
    assert r.points == [(0.0, 0.0), (30.0, pytest.approx(4.5e-6))]
    assert r.ignored_columns == ["note"]


@pytest.mark.parametrize("text, words", [
    ("time [s], pressure [bar]\n0, 1\n", "thickness column"),
    ("time [s], thickness [mm], filtrate [mL]\n0, 10, 0\n", "either a thickness column"),
    ("time [s], thickness [kg]\n0, 10\n", "thickness"),
    ("thickness [mm], note\n10, a\n", "no time column"),
    ("time [s], thickness [mm]\n0, ten\n", "line 2"),
])
def test_bad_tables_are_refused_in_words(text, words):
    with pytest.raises(CsvError, match=words):
        parse_squeeze_readings(text)
