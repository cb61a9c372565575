"""CSV readings: units in headers, separators, decimal commas, bad rows by line number."""

import re

import numpy as np
import pytest

from server.labdata import CsvError, parse_compression, parse_readings, parse_squeeze_readings


def test_units_in_headers_are_converted_to_si():
    r = parse_readings("time [min], filtrate [mL]\n0.5, 120\n1.5, 250\n")
    np.testing.assert_allclose(r.points, [(30.0, 120e-6), (90.0, 250e-6)], rtol=1e-12)
    assert (r.time_unit, r.volume_unit) == ("min", "mL")


def test_semicolons_with_decimal_commas():
    r = parse_readings("Time (s); Filtrate (L)\n17,3; 0,5\n41,3; 1,0\n")
    np.testing.assert_allclose(r.points, [(17.3, 0.5e-3), (41.3, 1.0e-3)], rtol=1e-12)
    assert r.decimal == "comma" and r.separator == "semicolons"


def test_tabs_blank_lines_comments_and_extra_columns_ignored_by_name():
    text = "# rig 2\ntime [s]\tfiltrate [US_gal]\tnote [-]\n\n60\t0.5\t1\n120\t0.8\t2\n"
    r = parse_readings(text.replace("US_gal", "gal"))
    np.testing.assert_allclose(r.points, [(60.0, 0.5 * 3.785411784e-3), (120.0, 0.8 * 3.785411784e-3)], rtol=1e-12)
    assert r.ignored_columns == ["note [-]"]


def test_columns_may_come_in_either_order():
    np.testing.assert_allclose(parse_readings("filtrate [L], time [s]\n0.5, 10\n").points, [(10.0, 0.5e-3)])


@pytest.mark.parametrize(
    "text,line,fragment",
    [
        ("time, filtrate [mL]\n1, 2\n", 1, "no unit"),
        ("time [min], filtrate [kg]\n1, 2\n", 1, "not a unit of volume"),
        ("time [min], filtrate [blorp]\n1, 2\n", 1, "unknown unit"),
        ("time [min], mass [g]\n1, 2\n", 1, "no filtrate volume column"),
        ("time [s], filtrate [L]\n1, 2\n3\n", 3, "expected 2 values"),
        ("time [s], filtrate [L]\n1, 2\n\n# c\n4, abc\n", 5, "not a number"),
        ("time [s]; filtrate [L]\n1,5; 2.0,1\n", 2, "mixes decimal comma and point"),
        ("time [s], filtrate [L]\n1, inf\n", 2, "finite"),
        ("time [s] filtrate [L]\n", 1, "two columns"),
    ],
)
def test_malformed_text_names_the_line_and_the_problem(text, line, fragment):
    with pytest.raises(CsvError) as err:
        parse_readings(text)
    assert err.value.line == line
    assert fragment in err.value.message


def test_empty_text_and_header_only_are_refused():
    with pytest.raises(CsvError, match="empty"):
        parse_readings("\n\n")
    with pytest.raises(CsvError, match="no readings"):
        parse_readings("time [s], filtrate [L]\n")


@pytest.mark.parametrize("parse,text,column", [
    (parse_readings, "time [min], filtrate\n1, 2\n2, 3\n", "filtrate"),
    (parse_readings, "time, filtrate [mL]\n1, 2\n2, 3\n", "time"),
    (parse_readings, "time [s], filtrate [mL], pressure\n1, 2, 3\n2, 3, 3\n", "pressure"),
    (parse_compression, "stress, alpha [m/kg], solidosity [-]\n1, 1e11, 0.3\n", "stress"),
    (parse_compression, "stress [kPa], alpha, solidosity [-]\n1, 1e11, 0.3\n", "alpha"),
    (parse_compression, "stress [kPa], alpha [m/kg], solidosity\n1, 1e11, 0.3\n", "solidosity"),
    (parse_squeeze_readings, "time [s], thickness\n0, 10\n1, 9\n", "thickness"),
])
def test_a_column_without_a_unit_is_shown_with_a_unit_of_its_kind_that_then_reads(parse, text, column):
    with pytest.raises(CsvError, match="no unit") as err:
        parse(text)
    suggested = re.search(r"for example, '([^']+)'", err.value.message).group(1)
    assert suggested.startswith(f"{column} [")
    parse(text.replace(column, suggested, 1))  # following the advice reads the table
