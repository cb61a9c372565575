"""Display units for results and charts: SI (metric) or US customary.

The solver and API speak SI base units; people read m³/h, bar, mm and min (or gpm, psi,
in and min). Each displayed quantity has a unit per system; values are converted with
the same pint registry as the input parser.
"""

import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

from .units import registry

SYSTEMS = ("si", "us")
#: The ``units`` query parameter of pages that show results.
UnitSystem = Literal["si", "us"]


@dataclass(frozen=True)
class Shown:
    label: str  # how people read the unit
    pint: str  # how pint spells it


#: Display unit of each quantity, per system.
DISPLAY = {
    "time": {"si": Shown("min", "min"), "us": Shown("min", "min")},
    "volume": {"si": Shown("m³", "m**3"), "us": Shown("ft³", "ft**3")},
    "volume_small": {"si": Shown("L", "L"), "us": Shown("US gal", "gallon")},
    "flow": {"si": Shown("m³/h", "m**3/h"), "us": Shown("US gpm", "gallon/min")},
    "flux": {"si": Shown("L/(m²·h)", "L/(m**2*h)"), "us": Shown("US gal/(ft²·h)", "gallon/(ft**2*h)")},
    "mass": {"si": Shown("kg", "kg"), "us": Shown("lb", "lb")},
    "mass_rate": {"si": Shown("kg/h", "kg/h"), "us": Shown("lb/h", "lb/h")},
    "mass_per_day": {"si": Shown("t/day", "t/day"), "us": Shown("short ton/day", "short_ton/day")},
    "thickness": {"si": Shown("mm", "mm"), "us": Shown("in", "inch")},
    "pressure": {"si": Shown("bar", "bar"), "us": Shown("psi", "psi")},
    "area": {"si": Shown("m²", "m**2"), "us": Shown("ft²", "ft**2")},
    "density": {"si": Shown("kg/m³", "kg/m**3"), "us": Shown("lb/ft³", "lb/ft**3")},
    "viscosity": {"si": Shown("mPa·s", "mPa*s"), "us": Shown("cP", "cP")},
    "specific_resistance": {"si": Shown("m/kg", "m/kg"), "us": Shown("ft/lb", "ft/lb")},
    "medium_resistance": {"si": Shown("1/m", "1/m"), "us": Shown("1/ft", "1/ft")},
    "percent": {"si": Shown("%", "percent"), "us": Shown("%", "percent")},
    "energy": {"si": Shown("kWh", "kWh"), "us": Shown("kWh", "kWh")},
    "specific_energy": {"si": Shown("kWh/t", "kWh/t"), "us": Shown("kWh/short ton", "kWh/short_ton")},
}

SI_OF = {
    "time": "s", "volume": "m**3", "volume_small": "m**3", "flow": "m**3/s", "flux": "m/s", "mass": "kg",
    "mass_rate": "kg/s", "mass_per_day": "kg/s", "thickness": "m", "pressure": "Pa", "area": "m**2",
    "density": "kg/m**3", "viscosity": "Pa*s", "specific_resistance": "m/kg", "medium_resistance": "1/m",
    "percent": "dimensionless", "energy": "J", "specific_energy": "J/kg",
}


@lru_cache(maxsize=256)
def _factor(quantity: str, system: str) -> float:
    ureg = registry()
    return float(ureg.Quantity(1.0, SI_OF[quantity]).to(DISPLAY[quantity][system].pint).magnitude)


#: the metric units the solver writes quantities in within its warnings ("80 m³/h", "7 bar"),
#: with the quantity each is (its metric display unit above); the longer spellings first
_TEXT_UNITS = {"L/(m²·h)": "flux", "m³/h": "flow", "kg/m³": "density", "m/kg": "specific_resistance",
               "1/m": "medium_resistance", "bar": "pressure", "mm": "thickness", "m²": "area", "m³": "volume",
               "kg": "mass"}
_NUMBER = r"(-?\d+(?:\.\d+)?(?:[eE][+-]?\d+)?)"
#: a number, or a range ("3 to 4 bar", "3–20 bar"), and its unit; a number grouped in thousands
#: ("1,500", "19 000") is left as written (the solver writes none)
_TEXT_QUANTITY = re.compile(
    r"(?<![\w.,])(?<!\d )" + _NUMBER + r"(?:( to |–)" + _NUMBER + r")? (" + "|".join(map(re.escape, _TEXT_UNITS))
    + r")(?![\w/²³·])")


class Units:
    """Converts SI values for display in one unit system."""

    def __init__(self, system: str = "si"):
        self.system = system if system in SYSTEMS else "si"

    def label(self, quantity: str) -> str:
        return DISPLAY[quantity][self.system].label

    def text(self, message: str) -> str:
        """A solver's message (written in metric units) with its quantities in this system:
        "below 80 m³/h" reads "below 352.2 US gpm" in US units, "(3 to 4 bar)" "(43.51 to 58.02
        psi)"; figures written as the pages write them (views.fmt, 4 significant figures). Other
        text is left as it is."""
        if self.system == "si":
            return message

        from .views import fmt  # written as every figure on the pages is

        def shown(match):
            first, joiner, second, unit = match.groups()
            quantity = _TEXT_UNITS[unit]
            scale = _factor(quantity, self.system) / _factor(quantity, "si")
            values = fmt(float(first) * scale, 4)
            if second is not None:  # a range: both ends converted
                values += joiner + fmt(float(second) * scale, 4)
            return f"{values} {self.label(quantity)}"

        return _TEXT_QUANTITY.sub(shown, message)

    @property
    def temperature_label(self) -> str:
        return "°F" if self.system == "us" else "°C"

    def temperature(self, kelvin: float) -> float:
        """A temperature [K] in this system's scale: °C, or °F in US customary units."""
        celsius = kelvin - 273.15
        return celsius * 1.8 + 32.0 if self.system == "us" else celsius

    def __call__(self, quantity: str, value):
        """SI value (or list of values) in the display unit of ``quantity``."""
        f = _factor(quantity, self.system)
        if value is None:
            return None
        if isinstance(value, list | tuple):
            return [None if v is None else v * f for v in value]
        return value * f
