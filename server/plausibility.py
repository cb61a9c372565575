"""Plausibility: values outside the trade's usual range are calculated, and flagged.

A value within the schema's allowed range may still be a slip: 0.58 typed with % chosen,
a pressure in the wrong unit. Each flag names the field, gives the value in the unit the
person typed and the usual range, and says when the value looks like a unit slip (a fraction
where % was chosen; a factor of 10 to 100 off the usual range). The usual ranges are the
editor's hints (common practice, no source).
"""

from dataclasses import dataclass

from .schemas.quantities import user_unit

#: usual range per request field, in SI (the editor's hints show it in the unit chosen)
USUAL = {
    "slurry.solids_mass_fraction": (0.01, 0.60),
    "slurry.solids_concentration": (10.0, 800.0),
    "slurry.solids_per_liquid": (10.0, 1500.0),
    "slurry.solids_density": (1000.0, 5000.0),
    "slurry.viscosity": (0.3e-3, 5e-3),
    "cake.resistance": (1e9, 1e14),
    "cake.moisture": (0.08, 0.80),
    "cake.wet_to_dry_ratio": (1.1, 5.0),
    "cake.porosity": (0.30, 0.80),
    "cake.dry_bulk_density": (300.0, 3500.0),
    "medium_resistance": (1e9, 1e12),
    "press.chamber_thickness": (0.020, 0.060),
    "press.fill_fraction": (0.80, 1.0),
    "feed.pressure": (3e5, 20e5),
    "feed.max_pressure": (3e5, 20e5),
    "cycle.downtime": (600.0, 3600.0),
}
#: fields where 0 has its own meaning (0 neglects the cloth): never flagged
ZERO_ALLOWED = {"medium_resistance"}
KINDS = {"slurry.solids_mass_fraction": "fraction", "slurry.solids_concentration": "density",
         "slurry.solids_per_liquid": "density", "slurry.solids_density": "density", "slurry.viscosity": "viscosity",
         "cake.resistance": "specific_resistance", "cake.moisture": "fraction", "cake.wet_to_dry_ratio": "fraction",
         "cake.porosity": "fraction", "cake.dry_bulk_density": "density", "medium_resistance": "medium_resistance",
         "press.chamber_thickness": "length", "press.fill_fraction": "fraction", "feed.pressure": "pressure",
         "feed.max_pressure": "pressure", "cycle.downtime": "time"}
#: the unit a range is written in when none was typed (the editor's first choice)
DEFAULT_UNITS = {"fraction": "%", "density": "kg/m^3", "viscosity": "mPa*s", "specific_resistance": "m/kg",
                 "medium_resistance": "1/m", "length": "mm", "pressure": "bar", "time": "min"}
#: ratios that are plain numbers, never percent
PLAIN = {"cake.wet_to_dry_ratio"}


def _nice(x: float) -> str:
    """A range end as people write it: 3 significant figures, powers of ten as 1e9."""
    if x == 0.0:
        return "0"
    if 1e-3 <= abs(x) < 1e5:
        return f"{float(f'{x:.3g}'):g}"
    mantissa, exponent = f"{x:.2e}".split("e")
    return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)}"


def usual_range(path: str, unit: str | None = None) -> str:
    """The usual range of ``path`` written in ``unit`` (a unit as the editor's menus spell it;
    None: the editor's first choice), e.g. "3–20 bar", "43.5–290 psi", "1–60 %"."""
    from .forms import pretty_unit
    from .units import parse_quantity

    low, high = USUAL[path]
    kind = KINDS[path]
    if path in PLAIN:
        return f"{_nice(low)}–{_nice(high)}"
    if unit is None:
        unit = DEFAULT_UNITS[kind]
    if unit == "":
        return f"{_nice(low)}–{_nice(high)}" + ("" if kind == "fraction" else f" {pretty_unit(kind, '')}")
    zero, one = parse_quantity(f"0 {unit}", kind), parse_quantity(f"1 {unit}", kind)
    lo, hi = ((v - zero) / (one - zero) for v in (low, high))
    return f"{_nice(lo)}–{_nice(hi)} {pretty_unit(kind, unit)}"


@dataclass(frozen=True)
class InputWarning:
    field: str
    message: str


def _get(data, path: str):
    for part in path.split("."):
        if not isinstance(data, dict) or part not in data:
            return None
        data = data[part]
    return data


def input_warnings(si: dict, raw: dict) -> list[dict]:
    """Flags for values outside the usual range. ``si`` holds the request's values in SI (the
    validated request as a dict), ``raw`` the request as sent (for the units typed)."""
    out = []
    for path, (low, high) in USUAL.items():
        value = _get(si, path)
        if not isinstance(value, float | int) or (value == 0 and path in ZERO_ALLOWED):
            continue
        if low <= value <= high:
            continue
        typed = _get(raw, path)
        shown = _in_typed_unit(typed, value, KINDS[path])
        given = user_unit(typed, KINDS[path])
        usual = usual_range(path, _menu_spelling(given[0]) if given else None)
        message = f"{shown} is outside the usual {usual}; it was calculated as given."
        slip = _slip(typed, value, low, high)
        if slip:
            message += " " + slip
        out.append({"field": path, "message": message})
    return out


def _menu_spelling(unit: str) -> str:
    return unit.replace("³", "^3").replace("²", "^2").replace("·", "*")


def _in_typed_unit(typed, value: float, kind: str) -> str:
    given = user_unit(typed, kind)
    if given is not None:
        unit, to_user = given
        return f"{to_user(value):.4g} {unit}"
    return f"{value:.4g}" if kind == "fraction" else f"{value:.4g} (SI)"


def _slip(typed, value: float, low: float, high: float) -> str | None:
    """What the value would be if it were a common slip, when that lands in the usual range."""
    if isinstance(typed, str) and typed.strip().endswith("%") and low <= value * 100 <= high:
        return (f"It looks like a fraction typed where % is chosen: {value * 100:.4g} as a fraction would be "
                f"{value * 1e4:.4g} %.")
    for factor in (10, 100):
        for scaled, word in ((value * factor, "small"), (value / factor, "large")):
            if low <= scaled <= high:
                return f"It is a factor of {factor} too {word} for the usual range: check the unit."
    return None
