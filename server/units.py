"""Unit parsing at the web edge: "5 bar", "32 mm", "25 min", "12 %" -> SI floats.

The solver never sees a unit. Every quantity field of the API accepts either a bare
number in SI base units (temperature: degC) or a string "<number> <unit>" that pint
can read, of the field's dimension.
"""

import math
import re
from dataclasses import dataclass
from functools import lru_cache

import pint


@dataclass(frozen=True)
class Kind:
    """A kind of quantity the API takes."""

    name: str
    si_unit: str  # pint spelling of the SI unit the solver uses
    label: str  # how the SI unit is written for people
    bare_unit: str | None = None  # unit of a bare number when not the SI unit


KINDS = {
    k.name: k
    for k in [
        Kind("pressure", "Pa", "Pa"),
        Kind("length", "m", "m"),
        Kind("area", "m**2", "m²"),
        Kind("volume", "m**3", "m³"),
        Kind("time", "s", "s"),
        Kind("viscosity", "Pa*s", "Pa·s"),
        Kind("density", "kg/m**3", "kg/m³"),
        Kind("specific_resistance", "m/kg", "m/kg"),
        Kind("medium_resistance", "1/m", "1/m"),
        Kind("fraction", "dimensionless", "-"),
        Kind("temperature", "K", "K", bare_unit="degC"),
        Kind("flow", "m**3/s", "m³/s"),
        Kind("flux", "m/s", "m³/(m²·s)"),
        Kind("mass", "kg", "kg"),
        Kind("mass_rate", "kg/s", "kg/s"),
        Kind("hours", "hour", "h", bare_unit="hour"),  # running hours: a bare number is in hours
        Kind("diffusivity", "m**2/s", "m²/s"),  # the squeeze's consolidation coefficient
        Kind("rate", "1/s", "1/s"),  # the squeeze's creep rate
    ]
}

_SPACES = " \u00a0\u2009\u202f"  # space, no-break space, thin space, narrow no-break space
_MANTISSA = re.compile(r"^([-+]?)((?:\d|[.,]\d)[\d.,'\u2019" + _SPACES + r"]*)")
_EXPONENT = re.compile(r"^[eE][-+]?\d+")
_GROUP = re.compile(r"^\d{3}(?:[.,]\d*)?$")
_TIMES_TEN = re.compile(r"(?<=\d)\s*[×x*·]\s*10\s*(?:\^|\*\*)\s*([-+]?\d+)")
_SPACED_GROUP = re.compile("[" + _SPACES + "]+([^" + _SPACES + "]+)")
_REPLACEMENTS = [
    ("·", "*"), ("⋅", "*"), ("×", "*"), ("²", "^2"), ("³", "^3"), ("⁻¹", "^-1"),
    ("µ", "u"), ("μ", "u"), ("°C", "degC"), ("°F", "degF"), ("℃", "degC"), ("wt%", "%"),
    ("wt.%", "%"),
    # as the pages write US customary units (display.DISPLAY): "short ton/day", "US gpm", "US gal"
    ("short ton", "short_ton"), ("long ton", "long_ton"), ("US gpm", "gpm"),
    ("US gallon", "gallon"), ("US gal", "gallon"),
]
_POWER_SUFFIX = re.compile(r"\b(m|cm|mm|dm|ft|in)([23])\b")
MAX_LENGTH = 64


class UnitError(ValueError):
    """A quantity string that cannot be read, or is of the wrong dimension."""


class AmbiguousNumber(UnitError):
    """A number that reads two ways ("19,000": nineteen thousand, or 19 with a decimal comma)."""


def split_number(text: str) -> tuple[float, str]:
    """The number at the start of ``text`` as engineers write it, and the rest (the unit).

    Accepted: a decimal point or a decimal comma; digits grouped by spaces (also no-break and
    thin spaces), apostrophes, or by the separator that is not the decimal one ("19,000.5",
    "19.000,5"); an exponent ("1.2e11", "1,2E11"). A single dot is always a decimal point (as
    the API has always read it). A single comma followed by exactly three digits ("19,000") is
    refused as ambiguous (``AmbiguousNumber``): the tool never guesses which was meant.
    """
    s = _TIMES_TEN.sub(r"e\1", text.strip())  # "1.2×10^11", "1,2 x 10^11" -> "1.2e11"
    m = _MANTISSA.match(s)
    if not m:
        raise UnitError(f"could not read a number in {text!r}")
    sign, candidate = m.group(1), m.group(2)
    # space-grouped digits: each group after a space is three digits (the last may carry the
    # decimals); anything else after a space is the unit ("5 1/m" is 5 in 1/m)
    first = re.match("[^" + _SPACES + "]+", candidate)
    taken, pos = [first.group(0)], first.end()
    while re.fullmatch(r"\d{1,3}", taken[0].replace("'", "").replace("\u2019", "")) and "," not in taken[-1] \
            and "." not in taken[-1]:
        group = _SPACED_GROUP.match(candidate, pos)
        if group is None or _GROUP.match(group.group(1)) is None:
            break
        taken.append(group.group(1))
        pos = group.end()
    spaced = len(taken) > 1
    mantissa = "".join(taken)
    rest = s[m.start(2) + pos:]
    # a trailing separator belongs to nothing ("5." reads as 5.; "5," is refused below)
    exponent = _EXPONENT.match(rest)
    if exponent:
        rest = rest[exponent.end():]
    digits = _plain_digits(mantissa, spaced, sign + mantissa)
    number = float(sign + digits + (exponent.group(0) if exponent else ""))
    return number, rest.strip()


def _plain_digits(mantissa: str, grouped: bool, text: str) -> str:
    """``mantissa`` ("19 000,5" with the spaces removed: "19000,5") as "19000.5"."""
    apostrophes = "'" in mantissa or "\u2019" in mantissa
    body = mantissa.replace("'", "").replace("\u2019", "")
    grouped = grouped or apostrophes
    dots, commas = body.count("."), body.count(",")
    if dots and commas:
        decimal = "." if body.rfind(".") > body.rfind(",") else ","
        group = "," if decimal == "." else "."
        if body.count(decimal) > 1 or grouped:
            raise UnitError(f"could not read the number in {text!r}")
    elif dots > 1 or commas > 1:
        decimal, group = None, "." if dots else ","
        if grouped:
            raise UnitError(f"could not read the number in {text!r}")
    elif commas == 1:
        head, tail = body.split(",")
        if not grouped and re.fullmatch(r"[1-9]\d{0,2}", head) and re.fullmatch(r"\d{3}", tail):
            sign = "-" if text.lstrip().startswith("-") else ""
            raise AmbiguousNumber(
                f"{sign}{head},{tail} reads two ways: {sign}{head} {tail} or {sign}{head}.{tail}; "
                f"write {sign}{head}{tail} (or {sign}{head} {tail}) or {sign}{head}.{tail}"
            )
        decimal, group = ",", None
    else:
        decimal, group = ".", None
    if group:
        whole, _, fraction = body.partition(decimal) if decimal else (body, "", "")
        groups = whole.split(group)
        if not (re.fullmatch(r"\d{1,3}", groups[0]) and all(re.fullmatch(r"\d{3}", g) for g in groups[1:])):
            raise UnitError(f"could not read the number in {text!r}: digits are grouped in threes")
        body = "".join(groups) + ("." + fraction if decimal else "")
    elif decimal == ",":
        body = body.replace(",", ".")
    if not re.fullmatch(r"\d*\.?\d*", body) or not re.search(r"\d", body) or body.endswith(",") :
        raise UnitError(f"could not read the number in {text!r}")
    return body


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    # Gauge pressure is the pressure drop across cake and cloth when the filtrate
    # leaves at atmospheric pressure, which is how presses are run.
    ureg.define("barg = bar")
    ureg.define("psig = psi")
    ureg.define("gpm = gallon / minute")
    return ureg


def _normalise(unit: str) -> str:
    for old, new in _REPLACEMENTS:
        unit = unit.replace(old, new)
    return _POWER_SUFFIX.sub(r"\1^\2", unit)


def parse_quantity(value, kind: str) -> float:
    """A number in SI (temperature: degC) or a "<number> <unit>" string -> SI float.

    Raises UnitError with a message fit for a person when the string cannot be read,
    the unit is unknown, or its dimension does not fit ``kind``.
    """
    k = KINDS[kind]
    if isinstance(value, bool):
        raise UnitError(f"expected a number or a quantity such as {example(kind)}")
    if isinstance(value, int | float):
        try:
            number, unit = float(value), None
        except OverflowError:  # an integer beyond any float (309 digits and more)
            raise UnitError("must be a finite number") from None
    elif isinstance(value, str):
        return _parse_text(value, kind)  # the same strings come again and again: cached
    else:
        raise UnitError(f"expected a number or a quantity such as {example(kind)}")
    if not math.isfinite(number):
        raise UnitError("must be a finite number")
    if unit is None:
        if k.bare_unit is None:
            return number
        unit = k.bare_unit
    to_si = _converter(unit, k.si_unit, kind)
    si = to_si(number)
    if not math.isfinite(si):
        raise UnitError(f"{value!r} is out of numeric range in SI units")
    return float(si)


@lru_cache(maxsize=4096)
def _parse_text(value: str, kind: str) -> float:
    """A "<number> <unit>" string -> SI float (see parse_quantity); errors are not cached."""
    if len(value) > MAX_LENGTH:
        raise UnitError(f"a quantity is at most {MAX_LENGTH} characters")
    try:
        number, unit = split_number(value)
    except AmbiguousNumber:
        raise
    except UnitError as exc:
        raise UnitError(f"{exc}: write a number and a unit, such as {example(kind)}") from None
    unit = _normalise(unit) or None
    if not math.isfinite(number):
        raise UnitError("must be a finite number")
    k = KINDS[kind]
    if unit is None:
        if k.bare_unit is None:
            return number
        unit = k.bare_unit
    si = _converter(unit, k.si_unit, kind)(number)
    if not math.isfinite(si):
        raise UnitError(f"{value!r} is out of numeric range in SI units")
    return float(si)


@lru_cache(maxsize=512)
def _converter(unit: str, si_unit: str, kind: str):
    """A function number -> SI for one unit string (cached: pint parsing is slow)."""
    ureg = registry()
    try:
        parsed = ureg.parse_units(unit)
    except Exception:  # pint raises several kinds for unreadable units
        raise UnitError(f"unknown unit {unit!r}; use, for example, {example(kind)}") from None
    target = ureg.parse_units(si_unit)
    if parsed.dimensionality != target.dimensionality:
        raise UnitError(
            f"{unit!r} is not a unit of {kind.replace('_', ' ')}; use, for example, {example(kind)}"
        )
    try:
        zero = ureg.Quantity(0.0, parsed).to(target).magnitude
        scale = ureg.Quantity(1.0, parsed).to(target).magnitude - zero
    except (OverflowError, ZeroDivisionError, ArithmeticError):
        raise UnitError(f"{unit!r} is out of numeric range; use, for example, {example(kind)}") from None
    if not (math.isfinite(zero) and math.isfinite(scale) and scale != 0.0):
        raise UnitError(f"{unit!r} is out of numeric range; use, for example, {example(kind)}")
    return lambda number: zero + scale * number


#: examples of each kind in messages, units as people write them (each is read back: _REPLACEMENTS)
_EXAMPLES = {
    "pressure": '"5 bar" or "70 psi"',
    "length": '"32 mm" or "1.25 in"',
    "area": '"120 m²" or "1300 ft²"',
    "volume": '"2.5 m³" or "250 L"',
    "time": '"25 min" or "1.5 h"',
    "viscosity": '"1.0 mPa·s" or "1 cP"',
    "density": '"2650 kg/m³" or "1.0 g/cm³"',
    "specific_resistance": '"1.5e11 m/kg" or "2.2e11 ft/lb"',
    "medium_resistance": '"1e10 1/m" or "3e9 1/ft"',
    "fraction": '"12 %" or 0.12',
    "temperature": '"20 °C", "68 °F" or 20 (°C)',
    "flow": '"30 m³/h" or "120 gpm"',
    "flux": '"150 L/(m²·h)"',
    "mass": '"12 kg" or "25 lb"',
    "mass_rate": '"120 t/day" or "5 t/h"',
    "hours": '"22 h" or 22 (h)',
    "diffusivity": '"2e-7 m²/s" or "0.72 cm²/h"',
    "rate": '"1e-3 1/s" or "3.6 1/h"',
}


#: a unit in the parser's spelling -> as people write it (each is read back: _REPLACEMENTS)
_WRITTEN = [("**", "^"), ("^2", "²"), ("^3", "³"), ("*", "·"), ("degC", "°C"), ("degF", "°F")]


def written(unit: str) -> str:
    """A unit as people write it: "m^2" -> "m²", "mPa*s" -> "mPa·s", "degC" -> "°C", "cm2" -> "cm²".

    >>> written("kg/m**3"), written("mPa*s"), written("degF"), written("m2")
    ('kg/m³', 'mPa·s', '°F', 'm²')
    """
    unit = _POWER_SUFFIX.sub(r"\1^\2", unit)
    for old, new in _WRITTEN:
        unit = unit.replace(old, new)
    return unit


def example(kind: str) -> str:
    return _EXAMPLES[kind]


def warm_up() -> None:
    """Build pint's registry and the converters of the units people use most (start-up)."""
    for kind, units in _USUAL.items():
        for unit in units:
            parse_quantity(f"1 {unit}", kind)


_USUAL = {
    "pressure": ("bar", "kPa", "psi", "Pa"), "length": ("mm", "in", "m"), "area": ("m^2", "ft^2", "cm^2"),
    "time": ("min", "h", "s"), "viscosity": ("mPa*s", "cP"), "density": ("kg/m^3", "g/cm^3", "g/L"),
    "specific_resistance": ("m/kg",), "medium_resistance": ("1/m",), "fraction": ("%",),
    "temperature": ("degC", "degF"), "flow": ("m^3/h", "L/min", "gpm"), "volume": ("L", "mL", "m^3"),
    "mass_rate": ("t/day", "t/h", "kg/h"),
}
