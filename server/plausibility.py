"""Plausibility: values outside the trade's usual range are calculated, and flagged.

A value within the schema's allowed range may still be a slip: 0.58 typed with % chosen,
a pressure in the wrong unit. Each flag names the field, gives the value in the unit the
person typed and the usual range, and says when the value looks like a unit slip (a fraction
where % was chosen; a factor of 10 to 100 off the usual range). The usual ranges are the
editor's hints (common practice, no source).
"""

from dataclasses import dataclass

from .schemas.quantities import user_unit

#: usual range per request field: (low, high) in SI, and how the range is written for people
USUAL = {
    "slurry.solids_mass_fraction": (0.01, 0.60, "1–60 %"),
    "slurry.solids_concentration": (10.0, 800.0, "10–800 kg/m³"),
    "slurry.solids_density": (1000.0, 5000.0, "1000–5000 kg/m³"),
    "slurry.viscosity": (0.3e-3, 5e-3, "0.3–5 mPa·s"),
    "cake.resistance": (1e9, 1e14, "1e9–1e14 m/kg"),
    "cake.moisture": (0.08, 0.80, "8–80 %"),
    "cake.wet_to_dry_ratio": (1.1, 5.0, "1.1–5"),
    "cake.porosity": (0.30, 0.80, "30–80 %"),
    "medium_resistance": (1e9, 1e12, "1e9–1e12 1/m"),
    "press.chamber_thickness": (0.020, 0.060, "20–60 mm"),
    "press.fill_fraction": (0.80, 1.0, "80–100 %"),
    "feed.pressure": (3e5, 20e5, "3–20 bar"),
    "feed.max_pressure": (3e5, 20e5, "3–20 bar"),
    "cycle.downtime": (600.0, 3600.0, "10–60 min"),
}
#: fields where 0 has its own meaning (0 neglects the cloth): never flagged
ZERO_ALLOWED = {"medium_resistance"}
KINDS = {"slurry.solids_mass_fraction": "fraction", "slurry.solids_concentration": "density",
         "slurry.solids_density": "density", "slurry.viscosity": "viscosity",
         "cake.resistance": "specific_resistance", "cake.moisture": "fraction", "cake.wet_to_dry_ratio": "fraction",
         "cake.porosity": "fraction", "medium_resistance": "medium_resistance", "press.chamber_thickness": "length",
         "press.fill_fraction": "fraction", "feed.pressure": "pressure", "feed.max_pressure": "pressure",
         "cycle.downtime": "time"}


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
    for path, (low, high, usual) in USUAL.items():
        value = _get(si, path)
        if not isinstance(value, float | int) or (value == 0 and path in ZERO_ALLOWED):
            continue
        if low <= value <= high:
            continue
        typed = _get(raw, path)
        shown = _in_typed_unit(typed, value, KINDS[path])
        message = f"{shown} is outside the usual {usual}; it was calculated as given."
        slip = _slip(typed, value, low, high)
        if slip:
            message += " " + slip
        out.append({"field": path, "message": message})
    return out


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
