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


def _column(name: str) -> str | None:
    key = name.strip().lower()
    if key in TIME_NAMES:
        return "time"
    if key in VOLUME_NAMES:
        return "volume"
    if key in PRESSURE_NAMES:
        return "pressure"
    return None


def parse_readings(text: str) -> Readings:
    """(t, V) readings in SI from CSV text, with the pressure at each reading when a pressure
    column is given ("pressure [bar]"); CsvError names the line of any problem."""
    lines = text.splitlines()
    numbered = [(i + 1, ln) for i, ln in enumerate(lines) if ln.strip() and not ln.lstrip().startswith("#")]
    if not numbered:
        raise CsvError(None, "the text is empty: give a header such as 'time [min], filtrate [mL]' and readings")
    header_line, header = numbered[0]
    sep = _separator(header)
    names = [h.strip() for h in header.split(sep)]
    columns, ignored = {}, []
    for pos, cell in enumerate(names):
        if not cell:
            continue
        m = _HEADER.match(cell)
        kind = _column(m.group(1) if m else cell)
        if kind is None:
            ignored.append(cell)
            continue
        if not m:
            raise CsvError(header_line, f"column {cell!r} has no unit: write it as, for example, '{cell} [s]'")
        if kind in columns:
            raise CsvError(header_line, f"two columns give the {kind}")
        columns[kind] = (pos, m.group(2))
    for kind, label in (("time", "time"), ("volume", "filtrate volume")):
        if kind not in columns:
            raise CsvError(
                header_line, f"no {label} column in the header: name the columns time and filtrate with "
                f"their units, such as 'time [s], filtrate [L]'"
            )
    (t_pos, t_unit), (v_pos, v_unit) = columns["time"], columns["volume"]
    wanted = [(t_pos, "time", t_unit), (v_pos, "volume", v_unit)]
    if "pressure" in columns:
        wanted.append((columns["pressure"][0], "pressure", columns["pressure"][1]))
    for _, kind, unit in wanted:
        label = "filtrate" if kind == "volume" else kind
        try:
            parse_quantity(f"1 {unit}", kind)
        except UnitError as exc:
            raise CsvError(header_line, f"column {label}: {exc}") from None

    rows = numbered[1:]
    if len(rows) > MAX_ROWS:
        raise CsvError(None, f"at most {MAX_ROWS} readings; got {len(rows)}")
    decimal_comma = sep != "," and any("," in ln for _, ln in rows)
    points, pressures = [], []
    for line_no, ln in rows:
        cells = [c.strip() for c in ln.split(sep)]
        if len(cells) < max(pos for pos, _, _ in wanted) + 1:
            raise CsvError(line_no, f"expected {len(names)} values separated by {_sep_name(sep)}; got {len(cells)}")
        pair = []
        for pos, kind, unit in wanted:
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
                pair.append(parse_quantity(f"{number!r} {unit}", kind))
            except UnitError as exc:
                raise CsvError(line_no, f"{cells[pos]!r} {unit}: {exc}") from None
        points.append((pair[0], pair[1]))
        if len(pair) > 2:
            pressures.append(pair[2])
    if not points:
        raise CsvError(None, "no readings below the header")
    return Readings(points, t_unit, v_unit, _sep_name(sep), "comma" if decimal_comma else "point", ignored,
                    pressures if "pressure" in columns else None)


def _sep_name(sep: str) -> str:
    return {",": "commas", ";": "semicolons", "\t": "tabs"}[sep]
