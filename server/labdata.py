"""Lab readings from CSV text: a header naming the columns and their units, then rows.

    time [min], filtrate [mL]
    0.5, 120
    1.0, 205

Comma, semicolon or tab separated; decimal point, or decimal comma when the separator is
not a comma. Malformed text gets a message naming the line and the problem; nothing is
guessed (a column without a unit is an error, not seconds or litres by default).
"""

import math
import re
from dataclasses import dataclass

from .units import UnitError, parse_quantity

MAX_ROWS = 20000
TIME_NAMES = ("time", "t", "zeit", "elapsed time")
VOLUME_NAMES = ("filtrate", "volume", "v", "filtrate volume", "filtrate_volume")
PRESSURE_NAMES = ("pressure", "p", "druck", "pressure drop")
PLAIN_UNITS = ("-", "–", "1")
_HEADER = re.compile(r"^\s*([^\[\(]*?)\s*[\[\(]\s*([^\]\)]+?)\s*[\]\)]\s*$")


class CsvError(ValueError):
    def __init__(self, line: int | None, message: str):
        super().__init__(f"line {line}: {message}" if line else message)
        self.line = line
        self.message = message


@dataclass(frozen=True)
class Readings:
    points: list[tuple[float, float]]  # (t [s], V [m^3])
    time_unit: str
    volume_unit: str
    separator: str
    decimal: str
    ignored_columns: list[str]
    pressures: list[float] | None = None  # [Pa] per reading, when a pressure column is given


def _separator(header: str) -> str:
    for sep in (";", "\t", ","):
        if sep in header:
            return sep
    raise CsvError(1, "the header needs two columns, such as 'time [min], filtrate [mL]'")


#: The columns of a lab readings table: key -> (names people give it, quantity kind, label).
READING_COLUMNS = {
    "time": (TIME_NAMES, "time", "time"),
    "volume": (VOLUME_NAMES, "volume", "filtrate"),
    "pressure": (PRESSURE_NAMES, "pressure", "pressure"),
}
#: The columns of a compression-permeability table.
COMPRESSION_COLUMNS = {
    "stress": (("stress", "solids pressure", "p_s", "ps", "effective pressure", "pressure"), "pressure", "stress"),
    "resistance": (("resistance", "alpha", "specific resistance", "local resistance"), "specific_resistance",
                   "resistance"),
    "solidosity": (("solidosity", "solids fraction", "eps_s"), "fraction", "solidosity"),
    "porosity": (("porosity", "eps"), "fraction", "porosity"),
}


#: a unit of each kind of column, for the example in a "no unit" message
EXAMPLE_UNITS = {"time": "s", "volume": "mL", "pressure": "bar", "specific_resistance": "m/kg", "fraction": "-",
                 "length": "mm"}


@dataclass(frozen=True)
class Table:
    columns: dict  # key -> list of SI values
    units: dict  # key -> unit as written
    separator: str
    decimal: str
    ignored_columns: list[str]


def _column(name: str, spec: dict) -> str | None:
    key = name.strip().lower()
    return next((k for k, (names, _, _) in spec.items() if key in names), None)


def read_table(text: str, spec: dict, required: tuple, example: str) -> Table:
    """Columns of a CSV text in SI: a header naming each column and its unit, then rows.
    CsvError names the line of any problem."""
    lines = text.splitlines()
    numbered = [(i + 1, ln) for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")]
    if not numbered:
        raise CsvError(None, f"the text is empty: give a header such as '{example}' and readings")
    header_line, header = numbered[0]
    sep = _separator(header)
    names = [h.strip() for h in header.split(sep)]
    columns, ignored = {}, []
    for pos, cell in enumerate(names):
        if not cell:
            continue
        m = _HEADER.match(cell)
        kind = _column(m.group(1) if m else cell, spec)
        if kind is None:
            ignored.append(cell)
            continue
        if not m:
            unit = EXAMPLE_UNITS[spec[kind][1]]
            raise CsvError(header_line, f"column {cell!r} has no unit: write it as, for example, '{cell} [{unit}]'")
        if kind in columns:
            raise CsvError(header_line, f"two columns give the {spec[kind][2]}")
        columns[kind] = (pos, m.group(2))
    for kind in required:
        if kind not in columns:
            label = {"volume": "filtrate volume"}.get(kind, spec[kind][2])
            raise CsvError(header_line, f"no {label} column in the header: name the columns with their "
                                        f"units, such as '{example}'")
    # a plain number ("[-]", "[1]") for a fraction: the bare number is the value
    wanted = [(pos, key, spec[key][1], "" if spec[key][1] == "fraction" and unit in PLAIN_UNITS else unit)
              for key, (pos, unit) in columns.items()]
    for _, key, kind, unit in wanted:
        if not unit:
            continue
        try:
            parse_quantity(f"1 {unit}", kind)
        except UnitError as exc:
            raise CsvError(header_line, f"column {spec[key][2]}: {exc}") from None

    rows = numbered[1:]
    if len(rows) > MAX_ROWS:
        raise CsvError(None, f"at most {MAX_ROWS} readings; got {len(rows)}")
    decimal_comma = sep != "," and any("," in ln for _, ln in rows)
    values = {key: [] for _, key, _, _ in wanted}
    for line_no, ln in rows:
        cells = [c.strip() for c in ln.split(sep)]
        if len(cells) < max(pos for pos, _, _, _ in wanted) + 1:
            raise CsvError(line_no, f"expected {len(names)} values separated by {_sep_name(sep)}; got {len(cells)}")
        for pos, key, kind, unit in wanted:
            cell = cells[pos]
            if decimal_comma:
                if "." in cell and "," in cell:
                    raise CsvError(line_no, f"{cell!r} mixes decimal comma and point")
                cell = cell.replace(",", ".")
            try:
                number = float(cell)
            except ValueError:
                raise CsvError(line_no, f"{cells[pos]!r} is not a number") from None
            if not math.isfinite(number):
                raise CsvError(line_no, f"{cells[pos]!r} is not a finite number")
            try:
                values[key].append(parse_quantity(f"{number!r} {unit}", kind) if unit else number)
            except UnitError as exc:
                raise CsvError(line_no, f"{cells[pos]!r} {unit}: {exc}") from None
    if not rows:
        raise CsvError(None, "no readings below the header")
    return Table(values, {key: unit for key, (_, unit) in columns.items()}, _sep_name(sep),
                 "comma" if decimal_comma else "point", ignored)


def parse_readings(text: str) -> Readings:
    """(t, V) readings in SI from CSV text, with the pressure at each reading when a pressure
    column is given ("pressure [bar]"); CsvError names the line of any problem."""
    table = read_table(text, READING_COLUMNS, ("time", "volume"), "time [s], filtrate [L]")
    cols = table.columns
    return Readings(list(zip(cols["time"], cols["volume"])), table.units["time"], table.units["volume"],
                    table.separator, table.decimal, table.ignored_columns, cols.get("pressure"))


def parse_compression(text: str) -> list[tuple[float, float, float]]:
    """(effective solids pressure [Pa], local specific resistance [m/kg], solidosity [-]) rows of a
    compression-permeability test, from CSV text such as 'stress [kPa], alpha [m/kg],
    solidosity [-]' (or porosity instead of solidosity)."""
    spec = COMPRESSION_COLUMNS
    table = read_table(text, spec, ("stress", "resistance"), "stress [kPa], alpha [m/kg], solidosity [-]")
    cols = table.columns
    if ("solidosity" in cols) == ("porosity" in cols):
        raise CsvError(None, "give either a solidosity column or a porosity column (solids or void fraction)")
    solids = cols["solidosity"] if "solidosity" in cols else [1.0 - e for e in cols["porosity"]]
    return list(zip(cols["stress"], cols["resistance"], solids))


#: The columns of a squeeze (expression) test: time and either the cake thickness or the
#: liquid expressed.
SQUEEZE_COLUMNS = {
    "time": (TIME_NAMES, "time", "time"),
    "thickness": (("thickness", "cake thickness", "height", "cake height", "l", "h"), "length", "thickness"),
    "filtrate": (VOLUME_NAMES + ("expressed", "expressed liquid", "expressed filtrate", "liquid"), "volume",
                 "expressed liquid"),
}


@dataclass(frozen=True)
class SqueezeReadings:
    points: list[tuple[float, float]]  # (t [s], thickness [m] or expressed liquid [m^3])
    measured: str  # "thickness" or "filtrate"
    units: dict
    ignored_columns: list[str]


def parse_squeeze_readings(text: str) -> SqueezeReadings:
    """(t, thickness) or (t, expressed liquid) readings of a squeeze test in SI, from CSV text
    such as 'time [min], thickness [mm]' or 'time [s], filtrate [mL]'; CsvError names the line
    of any problem."""
    example = "time [s], thickness [mm]"
    table = read_table(text, SQUEEZE_COLUMNS, ("time",), example)
    cols = table.columns
    given = [k for k in ("thickness", "filtrate") if k in cols]
    if len(given) != 1:
        raise CsvError(None, "give either a thickness column or an expressed liquid (filtrate) column, such as "
                             f"'{example}' or 'time [s], filtrate [mL]'")
    measured = given[0]
    return SqueezeReadings(list(zip(cols["time"], cols[measured])), measured, table.units, table.ignored_columns)


def _sep_name(sep: str) -> str:
    return {",": "commas", ";": "semicolons", "\t": "tabs"}[sep]
