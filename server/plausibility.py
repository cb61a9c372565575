"""Plausibility: values outside the trade's usual range are calculated, and flagged.

A value within the schema's allowed range may still be a slip: 0.58 typed with % chosen,
a pressure in the wrong unit. Each flag names the field, gives the value in the unit the
person typed and the usual range, and says when the value looks like a unit slip (a fraction
where % was chosen; a value that 10, 100 or 1000 would bring into the usual range, said with how
many times it is off). The usual ranges are the editor's hints (common practice, no source).
"""

from dataclasses import dataclass

from pydantic import BaseModel

from .schemas.quantities import bound_text, user_unit

#: usual range per request field, in SI (the editor's hints show it in the unit chosen)
USUAL = {
    "slurry.solids_mass_fraction": (0.01, 0.60),
    "slurry.solids_concentration": (10.0, 1500.0),
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
    "press.plate_face_area": (0.05, 6.0),
    "press.filter_area": (1.0, 2000.0),
    "press.chambers": (5, 200),
    "cake.compressibility": (0.0, 0.9),
    "cycle.wash_pressure": (1e5, 20e5),
    "slurry.liquid_density": (900.0, 1400.0),
    "slurry.temperature": (278.15, 368.15),
    "cycle.wash_ratio": (0.0, 5.0),
    "cycle.end.flow_per_area": (5.0 / 3.6e6, 500.0 / 3.6e6),
    # list entries ("*" stands for each entry's index)
    "compare_thicknesses.*": (0.010, 0.100),
    "feed.steps.*.0": (0.3e5, 20e5),
    "feed.points.*.1": (0.3e5, 20e5),
    "press.fill_fraction": (0.80, 1.0),
    "feed.pressure": (3e5, 20e5),
    "feed.max_pressure": (3e5, 20e5),
    "cycle.downtime": (600.0, 3600.0),
    # where α was measured: a lab test's pressure (LAB_USUAL's range)
    "cake.reference_pressure": (0.2e5, 20e5),
    # the whole cycle's stages (issue 15): membrane plates are rated for about 7-16 bar; C_e of
    # mineral and sludge cakes spans about 1e-9 to 1e-5 m^2/s; dispersion numbers of real cakes
    # 2 to 100 (all from memory, broad on purpose)
    "cycle.squeeze.pressure": (5e5, 16e5),
    "cycle.squeeze.consolidation_coefficient": (1e-9, 1e-5),
    "cycle.wash_model.dispersion_number": (2.0, 100.0),
}
#: usual range per /api/v1/lab-fit request field, in SI ("*": each test). Lab filtration cells and
#: leaf tests: 10-500 cm² (the lab page's hint), vacuum leaf tests from about 0.2 bar to pressure cells
#: at 20 bar; the slurry's and cake's data as in a cycle (common practice, no source)
LAB_USUAL = {
    "tests.*.pressure": (0.2e5, 20e5),
    "tests.*.area": (10e-4, 500e-4),
    "tests.*.viscosity": USUAL["slurry.viscosity"],
    "tests.*.temperature": USUAL["slurry.temperature"],
    "tests.*.c": USUAL["slurry.solids_per_liquid"],
    "tests.*.solids_mass_fraction": USUAL["slurry.solids_mass_fraction"],
    "tests.*.solids_concentration": USUAL["slurry.solids_concentration"],
    "tests.*.solids_density": USUAL["slurry.solids_density"],
    "tests.*.liquid_density": USUAL["slurry.liquid_density"],
    "tests.*.moisture": USUAL["cake.moisture"],
    "tests.*.wet_to_dry_ratio": USUAL["cake.wet_to_dry_ratio"],
    "tests.*.porosity": USUAL["cake.porosity"],
    "reference_pressure": (0.2e5, 20e5),
}
#: usual range per /api/v1/squeeze-fit request field, in SI: a piston test at the press's squeeze
#: pressure (the cycle's range), on a lab cake of 10-500 cm² (the lab page's hint)
SQUEEZE_USUAL = {
    "pressure": USUAL["cycle.squeeze.pressure"],
    "area": LAB_USUAL["tests.*.area"],
    "solids_density": USUAL["slurry.solids_density"],
    "liquid_density": USUAL["slurry.liquid_density"],
}
#: fields where 0 has its own meaning (0 neglects the cloth): never flagged
ZERO_ALLOWED = {"medium_resistance"}
KINDS = {"slurry.solids_mass_fraction": "fraction", "slurry.solids_concentration": "density",
         "slurry.solids_per_liquid": "density", "slurry.solids_density": "density", "slurry.viscosity": "viscosity",
         "cake.resistance": "specific_resistance", "cake.moisture": "fraction", "cake.wet_to_dry_ratio": "fraction",
         "cake.porosity": "fraction", "cake.dry_bulk_density": "density", "medium_resistance": "medium_resistance",
         "press.chamber_thickness": "length", "press.fill_fraction": "fraction", "feed.pressure": "pressure",
         "feed.max_pressure": "pressure", "cycle.downtime": "time", "press.plate_face_area": "area",
         "press.filter_area": "area", "press.chambers": "fraction", "cake.compressibility": "fraction",
         "cycle.wash_pressure": "pressure", "slurry.liquid_density": "density", "slurry.temperature": "temperature",
         "cycle.wash_ratio": "fraction", "cycle.end.flow_per_area": "flux", "compare_thicknesses.*": "length",
         "feed.steps.*.0": "pressure", "feed.points.*.1": "pressure", "cycle.squeeze.pressure": "pressure",
         "cycle.squeeze.consolidation_coefficient": "diffusivity", "cycle.wash_model.dispersion_number": "fraction",
         "cake.reference_pressure": "pressure"}
KINDS.update({"tests.*.pressure": "pressure", "tests.*.area": "area", "tests.*.viscosity": "viscosity",
              "tests.*.temperature": "temperature", "tests.*.c": "density", "tests.*.solids_mass_fraction": "fraction",
              "tests.*.solids_concentration": "density", "tests.*.solids_density": "density",
              "tests.*.liquid_density": "density", "tests.*.moisture": "fraction",
              "tests.*.wet_to_dry_ratio": "fraction", "tests.*.porosity": "fraction", "reference_pressure": "pressure",
              "pressure": "pressure", "area": "area", "solids_density": "density", "liquid_density": "density"})
#: the unit a range is written in when none was typed (the editor's first choice)
DEFAULT_UNITS = {"fraction": "%", "density": "kg/m^3", "viscosity": "mPa*s", "specific_resistance": "m/kg",
                 "medium_resistance": "1/m", "length": "mm", "pressure": "bar", "time": "min", "area": "m^2",
                 "temperature": "degC", "flux": "L/(m^2*h)", "diffusivity": "m^2/s"}
#: plain numbers, never percent
PLAIN = {"cake.wet_to_dry_ratio", "press.chambers", "cake.compressibility", "cycle.wash_ratio",
         "cycle.wash_model.dispersion_number", "tests.*.wet_to_dry_ratio"}
#: a field's own unit for its range and for what a bare number may have meant, where the kind's
#: is not the one people use (a lab cell's area in cm², not m²)
KEY_UNITS = {"tests.*.area": "cm^2", "area": "cm^2"}
#: how far outside the usual range a value must be before a unit slip is suspected
SLIP_MARGIN = 3.0


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

    low, high = next(table[path] for table in (USUAL, LAB_USUAL, SQUEEZE_USUAL) if path in table)
    kind = KINDS[path]
    if path in PLAIN:
        return f"{_nice(low)}–{_nice(high)}"
    if unit is None:
        unit = KEY_UNITS.get(path) or DEFAULT_UNITS[kind]
    if unit == "":
        return f"{_nice(low)}–{_nice(high)}" + ("" if kind == "fraction" else f" {pretty_unit(kind, '')}")
    zero, one = parse_quantity(f"0 {unit}", kind), parse_quantity(f"1 {unit}", kind)
    lo, hi = ((v - zero) / (one - zero) for v in (low, high))
    return f"{_nice(lo)}–{_nice(hi)} {pretty_unit(kind, unit)}"


@dataclass(frozen=True)
class InputWarning:
    field: str
    message: str


def _usual_tree(usual: dict) -> dict:
    """USUAL's keys as a tree of their dotted parts ("*": every item of a list, a digit: that
    item of a pair), each leaf (low, high, whether 0 is allowed)."""
    tree: dict = {}
    for key, (low, high) in usual.items():
        *heads, last = key.split(".")
        node = tree
        for head in heads:
            node = node.setdefault(head, {})
        node[last] = (low, high, key in ZERO_ALLOWED)
    return tree


_TREES = {id(table): _usual_tree(table) for table in (USUAL, LAB_USUAL, SQUEEZE_USUAL)}


def input_warnings(si, raw: dict, usual: dict = USUAL) -> list[dict]:
    """Flags for values outside the usual range. ``si`` holds the request's values in SI (the
    validated request, as a model or as a dict), ``raw`` the request as sent (for the units
    typed); ``usual``: the usual ranges of the request's fields (USUAL: a cycle request;
    LAB_USUAL: a lab fit; SQUEEZE_USUAL: a squeeze fit).

    Most requests have no unusual value: the SI values are looked at once, along the tree of
    USUAL's keys (on a model, its fields: no dict of the whole request is made), and only if one
    lies outside its range is the request as sent walked, key by key, for the units typed."""
    tree = _TREES.get(id(usual))
    if tree is None:  # a table other than the three above (built each time: tests, tools)
        tree = _usual_tree(usual)
    if not _any_unusual(si, tree):
        return []
    if isinstance(si, BaseModel):
        si = si.model_dump()
    out = []
    for key, (low, high) in usual.items():
        for path, value, typed in _entries(si, raw, key):
            if not isinstance(value, float | int) or (value == 0 and key in ZERO_ALLOWED) or low <= value <= high:
                continue
            out.append({"field": path, "message": _unusual(key, value, typed, low, high)})
    return out


def _any_unusual(node, tree: dict) -> bool:
    """Whether any value under ``node`` that ``tree`` names lies outside its range (what
    :func:`_entries` would find, without the request as sent): may say yes where the full walk
    finds nothing to flag, never no where it finds something."""
    kind = type(node)  # exact types first: isinstance against a model class costs more
    if kind is dict:
        fields = node
    elif _is_model(kind):
        fields = node.__dict__  # a model's field values (getattr of a missing one costs pydantic an exception)
    elif isinstance(node, dict):
        fields = node
    elif isinstance(node, list | tuple):
        fields = None
    else:
        return False
    for head, sub in tree.items():
        if head == "*":
            if fields is not None:
                continue
            items = node
        elif fields is None:  # an item of a pair, by its index
            if not head.isdigit() or int(head) >= len(node):
                continue
            items = (node[int(head)],)
        else:
            value = fields.get(head)
            if value is None:
                continue
            items = (value,)
        for value in items:
            if _outside(value, *sub) if type(sub) is tuple else _any_unusual(value, sub):
                return True
    return False


def _outside(value, low: float, high: float, zero_allowed: bool) -> bool:
    kind = type(value)
    return ((kind is float or kind is int or isinstance(value, float | int))
            and not (value == 0 and zero_allowed) and not low <= value <= high)


_MODEL_TYPES: dict = {}  # type -> whether it is a pydantic model (worked out once per type)


def _is_model(kind: type) -> bool:
    known = _MODEL_TYPES.get(kind)
    if known is None:
        known = _MODEL_TYPES[kind] = issubclass(kind, BaseModel)
    return known


def _unusual(key: str, value: float, typed, low: float, high: float) -> str:
    """The flag of one value outside its usual range, in the unit typed, a likely slip named."""
    kind = KINDS[key]
    shown = _in_typed_unit(typed, value, kind)
    given = user_unit(typed, kind)
    if given:
        usual = usual_range(key, _menu_spelling(given[0]))
    else:  # a bare number: the range as the API reads bare numbers (SI, fractions as fractions)
        usual = usual_range(key, "" if kind == "fraction" else _SI_SPELLING.get(kind))
    message = f"{shown} is outside the usual {usual}; it was calculated as given."
    # a bare number: the unit it would be usual in says more than a factor of ten
    slip = (None if given else _bare_meant(key, typed, low, high)) or slip_hint(typed, value, low, high)
    return message + (" " + slip if slip else "")


def _bare_meant(key: str, typed, low: float, high: float) -> str | None:
    """For a number sent without a unit: the unit in which it would be usual, as the schema's
    refusals say it (quantities._meant), e.g. 'for 3 bar, send "3 bar"'."""
    from .schemas.quantities import meant

    units = (KEY_UNITS[key],) if key in KEY_UNITS else None
    hint = meant(typed, KINDS[key], lambda si: low <= si <= high, units)
    hint = hint.strip().removeprefix("(").removesuffix(")")
    return hint[:1].upper() + hint[1:] + "." if hint else None


def _entries(si, raw, key: str, done: str = ""):
    """(path, SI value, value as sent) of each input that ``key`` names; "*" in ``key`` stands
    for every index of a list."""
    head, _, rest = key.partition(".")
    if head == "*":
        if not isinstance(si, list):
            return
        for i, item in enumerate(si):
            typed = raw[i] if isinstance(raw, list) and i < len(raw) else None
            yield from _entries(item, typed, rest, f"{done}{i}.") if rest else [(f"{done}{i}", item, typed)]
        return
    si_next = si.get(head) if isinstance(si, dict) else (si[int(head)] if isinstance(si, list | tuple)
                                                        and head.isdigit() and int(head) < len(si) else None)
    raw_next = raw.get(head) if isinstance(raw, dict) else (raw[int(head)] if isinstance(raw, list | tuple)
                                                           and head.isdigit() and int(head) < len(raw) else None)
    if si_next is None:
        return
    if rest:
        yield from _entries(si_next, raw_next, rest, f"{done}{head}.")
    else:
        yield f"{done}{head}", si_next, raw_next


def _menu_spelling(unit: str) -> str:
    return unit.replace("³", "^3").replace("²", "^2").replace("·", "*")


#: the SI unit of a bare number, as the menus spell it
_SI_SPELLING = {"density": "kg/m^3", "viscosity": "Pa*s", "specific_resistance": "m/kg", "medium_resistance": "1/m",
                "length": "m", "pressure": "Pa", "time": "s", "area": "m^2", "temperature": "degC",
                "flux": "m^3/(m^2*s)", "diffusivity": "m^2/s", "rate": "1/s"}


def _in_typed_unit(typed, value: float, kind: str) -> str:
    from .forms import pretty_unit

    given = user_unit(typed, kind)
    if given is not None:
        unit, to_user = given
        # in the unit typed, written as the range beside it is ("m²", not "m^2": a plant-engineer check)
        return f"{bound_text(to_user(value), 4)} {pretty_unit(kind, unit)}"
    if kind == "fraction":
        return bound_text(value, 4)
    from .units import parse_quantity

    unit = _SI_SPELLING[kind]  # a bare number's unit: SI, or °C for a temperature
    zero, one = parse_quantity(f"0 {unit}", kind), parse_quantity(f"1 {unit}", kind)
    where = "°C" if kind == "temperature" else "SI units"
    return f"{bound_text((value - zero) / (one - zero), 4)} {pretty_unit(kind, unit)} (a bare number is in {where})"


def slip_hint(typed, value: float, low: float, high: float) -> str | None:
    """What the value would be if it were a common slip, when that lands in the usual range.

    Only a value well outside the range (SLIP_MARGIN) is suspected: 35 bar is unusual, not a slip.
    """
    if isinstance(typed, str) and typed.strip().endswith("%") and low <= value * 100 <= high:
        return (f"It looks like a fraction typed where % is chosen: {bound_text(value * 100, 4)} as a fraction "
                f"would be {bound_text(value * 1e4, 4)} %.")
    if low / SLIP_MARGIN <= value <= high * SLIP_MARGIN:
        return None
    if isinstance(typed, str) and "." in typed and low <= value * 1000 <= high:
        return (f"It is {times(low / value)} times too small for the usual range: a dot is read as the decimal "
                "point, so for thousands write the digits without it or group them with a space (19 000).")
    # a slip of a power of ten is suspected when undoing it lands in the range; the flag says how
    # far off the value is (it said "a factor of 100" of a value 50 times the top: a plant-engineer check)
    for factor in (10, 100, 1000):
        for scaled, word in ((value * factor, "small"), (value / factor, "large")):
            if low <= scaled <= high:
                return f"It is {times_off(value, low, high)} times too {word} for the usual range: check the unit."
    return None


def times(ratio: float) -> str:
    """How many times, as people say it: two significant figures ("50", "3.5", "1,200").

    >>> times(50.2), times(3.47), times(1234.0), times(26.3)
    ('50', '3.5', '1,200', '26')
    """
    rounded = float(f"{ratio:.2g}")
    return f"{rounded:,.0f}" if rounded >= 10 else f"{rounded:g}"


def times_off(value: float, low: float, high: float) -> str:
    """How many times a value outside [low, high] is off its nearer end, as people say it."""
    return times(low / value if value < low else value / high)


def fitted_resistance_warnings(resistance_ref: float, tests: list[tuple[str, float]]) -> list[str]:
    """A warning when a lab fit's specific cake resistance lies outside the usual range of
    cakes (USUAL["cake.resistance"]): most often a unit slip in a test's pressure or area.
    ``tests``: (label, fitted resistance [m/kg]) of each test."""
    low, high = USUAL["cake.resistance"]
    off = [f"{label} gives {_nice(alpha)} m/kg" for label, alpha in tests if not low <= alpha <= high]
    check = "it was calculated as given: check the units of the pressure drop, the filter area, c and the viscosity"
    if not low <= resistance_ref <= high:
        return [f"The fitted specific cake resistance, {_nice(resistance_ref)} m/kg, is outside the usual "
                f"{usual_range('cake.resistance')} of cakes; {check}"
                + (f" ({'; '.join(off)})." if len(tests) > 1 and off else ".")]
    if off:
        return [f"The specific cake resistance is outside the usual {usual_range('cake.resistance')} of cakes in "
                f"some tests ({'; '.join(off)}); {check} of those tests."]
    return []


def dry_cake_mass_warnings(tests: list[tuple[str, float]]) -> list[str]:
    """A warning per lab test whose c, worked out from its dry cake mass and final filtrate
    volume, lies outside the usual range (LAB_USUAL["tests.*.c"]): a mass typed in kg with g
    chosen, or the other way, gave a c 1000 times off with no word but the resistance's (a
    plant-engineer check). ``tests``: (label, c [kg/m^3]) of the tests that gave a dry cake mass."""
    low, high = LAB_USUAL["tests.*.c"]
    return [f"{label[:1].upper() + label[1:]}: the dry cake mass gives c = {_nice(c)} kg/m³ of filtrate, "
            f"{times_off(c, low, high)} times {'below' if c < low else 'above'} the usual "
            f"{usual_range('tests.*.c', 'kg/m^3')}; it was calculated as given: check the unit of the dry cake "
            "mass (g or kg) and the final filtrate volume."
            for label, c in tests if not low <= c <= high]


def fitted_consolidation_warnings(consolidation_coefficient: float) -> list[str]:
    """A warning when a squeeze fit's C_e lies outside the usual range of cakes
    (USUAL["cycle.squeeze.consolidation_coefficient"])."""
    low, high = USUAL["cycle.squeeze.consolidation_coefficient"]
    if low <= consolidation_coefficient <= high:
        return []
    return [f"The fitted consolidation coefficient, {_nice(consolidation_coefficient)} m²/s, is outside the usual "
            f"{usual_range('cycle.squeeze.consolidation_coefficient')} of cakes; it was calculated as given: check "
            "the units of the readings, the dry solids, the solids density and the area."]


def derived_warnings(derived: dict, si) -> list[dict]:
    """Flags for figures the inputs fix together: a solids density fixed by the cake's dry bulk
    density and moisture, outside the usual range of solids. ``si``: the request (a model or a
    dict)."""
    out = []
    if isinstance(si, BaseModel):
        dry_bulk, solids = si.cake.dry_bulk_density, si.slurry.solids_density
    else:
        dry_bulk = (si.get("cake") or {}).get("dry_bulk_density")
        solids = (si.get("slurry") or {}).get("solids_density")
    if dry_bulk is not None and solids is None:
        rho_s = derived.get("solids_density")
        low, high = USUAL["slurry.solids_density"]
        if rho_s is not None and not low <= rho_s <= high:
            out.append({"field": "cake.dry_bulk_density", "message": (
                f"With the cake's moisture, this dry bulk density means solids of {rho_s:.0f} kg/m³, outside the "
                f"usual {usual_range('slurry.solids_density')} of solids; it was calculated as given: check both.")})
    return out
