"""Quantity fields: a number in SI or a string with a unit, parsed and range-checked.

``quantity("pressure", gt=0, le=1e8)`` makes a pydantic field type that accepts 5e5 or
"5 bar", stores SI floats, and refuses out-of-range values with a message that names
the allowed range in the field's units (never silently clamps).
"""

import math
from functools import lru_cache
from typing import Annotated

from pydantic import BeforeValidator, WithJsonSchema

from ..units import KINDS, MAX_LENGTH, UnitError, example, parse_quantity, split_number, written


def bound_text(value: float, digits: int = 6) -> str:
    """A number of a refusal (a bound, the value refused) in the one spelling every refusal uses:
    ``digits`` significant figures, powers of ten as people type them ("8.64e6", "1e-3"), so the
    same bound reads the same in every message and can be typed back.

    Below a million, digits as people write them, not a power of ten ("14500 psi", not
    "1.45e4 psi": a plant-engineer check).

    >>> bound_text(8640000.000000001, 4), bound_text(1e-3), bound_text(100000.0), bound_text(14503.7, 4)
    ('8.64e6', '0.001', '100000', '14500')
    >>> bound_text(999999.5), bound_text(10 / 1e-5, 4), bound_text(1e6, 4)
    ('1e6', '1e6', '1e6')
    """
    text = f"{value:.{digits}g}"
    if "e+" in text and abs(float(text)) < 1e6:  # as rounded: 999999.5 is 1e6, as 1e6 is
        text = f"{float(text):f}".rstrip("0").rstrip(".")
    return text.replace("e+0", "e").replace("e+", "e").replace("e-0", "e-")


def _shown_si(value: float, kind: str) -> float:
    """An SI value in the unit of a bare number, which refusals write: SI, or °C for a temperature."""
    return value - 273.15 if KINDS[kind].bare_unit == "degC" else value


def _bare_label(kind: str) -> str:
    """The unit of a bare number as people write it ("°C", "m²"; "-": a fraction)."""
    return "°C" if KINDS[kind].bare_unit == "degC" else KINDS[kind].label


def _fmt(value: float, kind: str, digits: int = 6) -> str:
    """An SI value as a refusal writes it, its unit as people write it ("20 °C", "0.001 m²")."""
    text = bound_text(_shown_si(value, kind), digits)
    label = _bare_label(kind)
    return text if label == "-" else f"{text} {label}"


def range_text(kind, gt=None, ge=None, lt=None, le=None) -> str:
    parts = []
    if gt is not None:
        parts.append(f"above {_fmt(gt, kind)}")
    if ge is not None:
        parts.append(f"at least {_fmt(ge, kind)}")
    if lt is not None:
        parts.append(f"below {_fmt(lt, kind)}")
    if le is not None:
        parts.append(f"at most {_fmt(le, kind)}")
    return " and ".join(parts)


#: Relative tolerance of an inclusive bound.
TOLERANCE = 1e-9


#: the units a person most likely meant by a bare number refused as SI ("7" for a pressure: 7 bar)
_MEANT = {"pressure": ("bar", "kPa"), "length": ("mm", "cm"), "time": ("min", "h"), "flow": ("m^3/h",),
          "volume": ("L",), "viscosity": ("mPa*s",), "flux": ("L/(m^2*h)",), "fraction": ("%",),
          "density": ("g/cm^3",), "area": ("cm^2",)}


def meant(value, kind: str, inside, units: tuple | None = None) -> str:
    """For a number sent without a unit and refused (or unusual): the unit it fits in, as a hint,
    or "". ``units``: the units to try (default: the kind's, _MEANT)."""
    if isinstance(value, bool) or not isinstance(value, int | float | str):
        return ""
    text = f"{value:g}" if isinstance(value, int | float) else value.strip()
    for unit in _MEANT.get(kind, ()) if units is None else units:
        try:
            if inside(parse_quantity(f"{text} {unit}", kind)):
                shown = written(unit)
                bare = "a fraction" if KINDS[kind].label == "-" else f"in {KINDS[kind].label}"
                return f' (a number without a unit is {bare}: for {text} {shown}, send "{text} {shown}")'

        except UnitError:
            return ""
    return ""


def _out_of_range(value, si: float, kind: str, allowed: str, gt, ge, lt, le, inside=None) -> str:
    """The refusal in the unit the person used (4 significant figures), with SI beside it; for a
    number sent without a unit, the unit it would fit in (``inside``: the range check)."""
    given = user_unit(value, kind)
    if given is None or all(math.isclose(given[1](x), _shown_si(x, kind), rel_tol=1e-12, abs_tol=1e-9)
                            for x in (0.0, 1.0)):  # in the unit refusals write (SI; °C): said once
        hint = meant(value, kind, inside) if given is None and inside is not None else ""
        return f"must be {allowed}; got {_fmt(si, kind)}{hint}"
    typed, to_user = given
    unit = written(typed)
    bounds = [(word, to_user(b)) for word, b in (("above", gt), ("at least", ge), ("below", lt), ("at most", le))
              if b is not None]
    in_user = " and ".join(f"{word} {bound_text(b, 4)} {unit}" for word, b in bounds)
    if unit == "%":  # a share typed in % is answered in % alone: "(above 0 and at most 1)" beside it read as noise
        return f"must be {in_user}; got {bound_text(to_user(si), 4)} %"
    return f"must be {in_user} ({allowed}); got {bound_text(to_user(si), 4)} {unit} ({_fmt(si, kind)})"


def user_unit(value, kind: str):
    """(unit as written, SI -> that unit) for a string with a unit, else None."""
    if not isinstance(value, str):
        return None
    try:
        unit = split_number(value)[1]
    except UnitError:
        return None
    if not unit:
        return None
    try:
        zero, one = parse_quantity(f"0 {unit}", kind), parse_quantity(f"1 {unit}", kind)
    except UnitError:
        return None
    shown = "%" if unit in ("%", "percent") else unit
    return shown, (lambda si: (si - zero) / (one - zero))


def _number_bounds(kind, gt, ge, lt, le) -> dict:
    """The allowed range as JSON Schema bounds on the bare-number form (in its unit: SI, or
    degC for a temperature), so clients and schema-driven tools can see the limits."""
    shift = -273.15 if KINDS[kind].bare_unit == "degC" else 0.0
    names = {"exclusiveMinimum": gt, "minimum": ge, "exclusiveMaximum": lt, "maximum": le}
    return {name: value + shift for name, value in names.items() if value is not None}


def quantity(kind: str, *, gt=None, ge=None, lt=None, le=None, description: str = "", unit_hint: bool = True):
    """An Annotated float field type for one kind of quantity with an allowed range (SI).
    ``unit_hint`` False: a refused bare number gets no "for 1.5 %, send ..." hint (an exponent
    such as the compressibility is a fraction by kind but never a percentage: the hint misled)."""
    allowed = range_text(kind, gt, ge, lt, le)

    def inside(si: float) -> bool:
        return ((gt is None or si > gt) and (ge is None or si >= ge - TOLERANCE * abs(ge))
                and (lt is None or si < lt) and (le is None or si <= le + TOLERANCE * abs(le)))

    @lru_cache(maxsize=1024)
    def parse_text(value: str) -> float:
        return checked(value)  # a refusal raises, and is not kept

    def parse(value):
        # the same strings ("7 bar", "58 %") come in request after request: each is read and
        # range-checked once (issue 12: a request holds about twenty)
        return parse_text(value) if type(value) is str else checked(value)

    def checked(value):
        try:
            si = parse_quantity(value, kind)
        except UnitError as exc:
            raise ValueError(str(exc)) from None
        # an inclusive bound given exactly in another unit may come out one rounding step past
        # it ("0.001 g/L" -> 0.0009999999999999998 kg/m^3): within 1e-9 it is the bound
        if not inside(si):
            raise ValueError(_out_of_range(value, si, kind, allowed, gt, ge, lt, le, inside if unit_hint else None))
        # within the tolerance past an inclusive bound it is the bound, for every later check too
        if ge is not None and si < ge:
            return ge
        if le is not None and si > le:
            return le
        return si

    bare = "a bare number is a fraction" if _bare_label(kind) == "-" else f"a bare number is in {_bare_label(kind)}"
    schema = {
        "anyOf": [{"type": "number", **_number_bounds(kind, gt, ge, lt, le)},
                  {"type": "string", "maxLength": MAX_LENGTH, "pattern": r"^\s*[-+]?(\d|[.,]\d)"}],
        "x-si-unit": KINDS[kind].label,
        "description": (
            f"{description} [{KINDS[kind].label}]; {bare}, or give a string with a unit "
            f"such as {example(kind)}. Allowed: {allowed}."
        ).strip(),
    }
    return Annotated[float, BeforeValidator(parse), WithJsonSchema(schema)]
