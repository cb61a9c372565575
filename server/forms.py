"""The scenario editor's fields: one table, used by the template and to prefill the form.

Field names are the API's dotted paths (``slurry.solids_mass_fraction``), so a 422 from
the API points straight at the input. Alternatives (mass fraction or concentration, ...)
are choices: only the chosen alternative's fields are sent.
"""

from dataclasses import dataclass, field

from .units import written

UNIT_CHOICES = {
    "pressure": [("bar", "bar"), ("kPa", "kPa"), ("MPa", "MPa"), ("psi (lbf/in²)", "psi"), ("atm", "atm"),
                 ("lbf/ft²", "lbf/ft^2"), ("Pa", "Pa")],
    "length": [("mm", "mm"), ("in", "in"), ("m", "m")],
    "area": [("m²", "m^2"), ("ft²", "ft^2"), ("cm²", "cm^2")],
    "volume": [("m³", "m^3"), ("L", "L"), ("ft³", "ft^3"), ("US gal", "gal")],
    "time": [("min", "min"), ("h", "h"), ("s", "s")],
    "viscosity": [("mPa·s", "mPa*s"), ("cP", "cP"), ("Pa·s", "Pa*s"), ("lb/(ft·s)", "lb/(ft*s)")],
    "density": [("kg/m³", "kg/m^3"), ("g/cm³", "g/cm^3"), ("lb/ft³", "lb/ft^3")],
    "concentration": [("kg/m³", "kg/m^3"), ("g/L", "g/L"), ("lb/ft³", "lb/ft^3"), ("lb/US gal", "lb/gal")],
    "specific_resistance": [("m/kg", "m/kg"), ("ft/lb", "ft/lb")],
    "medium_resistance": [("1/m", "1/m"), ("1/ft", "1/ft")],
    "fraction": [("%", "%"), ("fraction", "")],
    "ratio": [("–", "")],
    "count": [("–", "")],
    "washing": [("–", "")],
    "wash_basis": [("–", "")],
    "temperature": [("°C", "degC"), ("°F", "degF"), ("K", "K")],
    "flow": [("m³/h", "m^3/h"), ("L/min", "L/min"), ("US gpm", "gpm"), ("ft³/min", "ft^3/min"), ("m³/s", "m^3/s")],
    "flux": [("L/(m²·h)", "L/(m^2*h)"), ("US gal/(ft²·h)", "gal/(ft^2*h)")],
    "hours": [("h", "h")],
    "mass": [("g", "g"), ("kg", "kg"), ("lb", "lb")],
    "mass_rate": [("t/day", "t/day"), ("t/h", "t/h"), ("kg/h", "kg/h"), ("short ton/day", "ton/day")],
    "diffusivity": [("m²/s", "m^2/s"), ("cm²/min", "cm^2/min"), ("ft²/h", "ft^2/h")],
    "rate": [("1/min", "1/min"), ("1/s", "1/s"), ("1/h", "1/h")],
    "blowcurve": [("–", "")],
    "stage_order": [("–", "")],
    "time_or_pump": [("min", "min"), ("s", "s"), ("h", "h")],
}


def pretty_unit(kind: str, unit: str) -> str:
    """How a unit of the menus (pint spelling) is written for people: its menu label."""
    for label, value in UNIT_CHOICES.get(kind, []) + UNIT_CHOICES.get(_MENU_OF.get(kind, ""), []):
        if value == unit:
            return label
    return written(unit)


_MENU_OF = {"density": "concentration", "concentration": "density"}


@dataclass(frozen=True)
class FormField:
    """One input: its API path, label, unit kind, one-line hint with the typical range."""

    path: str
    label: str
    kind: str
    hint: str
    optional: bool = False
    #: the field whose unit this one shares (a standard error is in its value's unit)
    unit_of: str | None = None
    #: "choice=option": with that option chosen this field is redundant, shown disabled, not sent
    unused_with: str | None = None

    @property
    def full_label(self) -> str:
        """The label on its own, for tables and messages ("Standard error of α", not "… its standard error")."""
        return FULL_LABELS.get(self.path, self.label)

    @property
    def id(self) -> str:
        return "f-" + self.path.replace(".", "-")

    @property
    def units(self):
        return UNIT_CHOICES[self.kind]

    def hint_in(self, unit: str | None) -> str:
        """The hint with its usual range ("{usual}") written in ``unit`` (a menu value)."""
        if "{usual}" not in self.hint:
            return self.hint
        from .plausibility import usual_range

        return self.hint.replace("{usual}", usual_range(self.path, unit))

    def hints(self) -> dict:
        """The hint in each unit of the field's menu, for the page to follow the unit chosen."""
        if "{usual}" not in self.hint or len(self.units) < 2:
            return {}
        return {value: self.hint_in(value) for _, value in self.units}


@dataclass(frozen=True)
class Choice:
    """Alternatives: exactly one option's fields are sent.

    With ``sent`` the chosen option's value is itself an input at the API path ``name``
    (``feed.mode``); otherwise ``name`` only names the choice and the option is read back
    from which of its fields the inputs hold.
    """

    name: str
    label: str
    options: list  # (value, label, [FormField, ...])
    sent: bool = False


@dataclass(frozen=True)
class Group:
    key: str
    title: str
    items: list = field(default_factory=list)  # FormField or Choice


GROUPS = [
    Group("slurry", "Slurry", [
        Choice("slurry.basis", "Solids given as", [
            ("mass_fraction", "mass fraction", [FormField("slurry.solids_mass_fraction", "Solids in the slurry", "fraction",
                                                 "by mass; typically {usual}")]),
            ("concentration", "per slurry volume", [FormField("slurry.solids_concentration", "Solids per slurry volume",
                                                       "concentration", "dry solids per m³ of slurry; typically {usual}")]),
            ("per_liquid", "per liquid volume", [FormField("slurry.solids_per_liquid", "Solids per liquid volume",
                                                   "concentration", "dry solids per m³ (or g per L) of slurry liquid; typically {usual}")]),
        ]),
        FormField("slurry.solids_density", "Solids density", "density",
          "typically {usual}, organics at the low end; not needed when the cake is given by its dry bulk "
          "density and moisture (they fix it)", optional=True, unused_with="cake.liquid_basis=bulk_moisture"),
        FormField("slurry.liquid_density", "Filtrate density", "density",
          "typically {usual}; blank: water at the temperature, or 998 kg/m³", optional=True),
        Choice("slurry.viscosity_basis", "Filtrate viscosity from", [
            ("temperature", "temperature (water-like)", [FormField("slurry.temperature", "Slurry temperature", "temperature",
                                                             "water-like filtrate; typically {usual}")]),
            ("viscosity", "measured viscosity", [FormField("slurry.viscosity", "Filtrate viscosity", "viscosity",
                                                   "water is 1.0 mPa·s at 20 °C; typically {usual}")]),
        ]),
    ]),
    Group("cake", "Cake", [
        FormField("cake.resistance", "Specific cake resistance α", "specific_resistance",
          "from your lab test; typically {usual} (free-draining to slimes)"),
        FormField("cake.resistance_stderr", "… its standard error", "specific_resistance",
          "optional, from the lab fit: shows how far the answer moves; in α's unit", optional=True,
          unit_of="cake.resistance"),
        FormField("cake.reference_pressure", "… measured at", "pressure",
          "the test pressure of α; needed when s > 0", optional=True),
        FormField("cake.compressibility", "Compressibility s", "ratio", "0 incompressible; 0.1–0.9 compressible", optional=True),
        FormField("cake.compressibility_stderr", "… its standard error", "ratio",
          "optional, from a lab fit at several pressures", optional=True),
        Choice("cake.pressure_basis", "α at the pressure", sent=True, options=[
            ("cake", "across the cake", []),
            ("total", "across cake and cloth", []),
        ]),
        Choice("cake.liquid_basis", "Cake liquid given as", [
            ("moisture", "moisture", [FormField("cake.moisture", "Cake moisture", "fraction",
                                        "liquid / wet cake mass; typically {usual}")]),
            ("wet_to_dry_ratio", "wet-to-dry ratio", [FormField("cake.wet_to_dry_ratio", "Wet / dry cake mass", "ratio",
                                                        "typically {usual}; about 2 for fine minerals")]),
            ("porosity", "porosity", [FormField("cake.porosity", "Cake porosity", "fraction", "void fraction; typically {usual}")]),
            ("bulk_density", "dry bulk density", [FormField("cake.dry_bulk_density", "Cake dry bulk density", "density",
                                                     "dry solids per cake volume, typically {usual}; needs the solids density")]),
            ("bulk_moisture", "dry bulk density and moisture", [
                FormField("cake.dry_bulk_density", "Cake dry bulk density", "density",
                          "dry solids per cake volume, typically {usual}; with the moisture it fixes the solids density"),
                FormField("cake.moisture", "Cake moisture", "fraction", "liquid / wet cake mass; typically {usual}"),
            ]),
        ]),
    ]),
    Group("cloth", "Cloth", [
        FormField("medium_resistance", "Cloth resistance R_m", "medium_resistance",
          "from your lab test; typically {usual}; 0 neglects the cloth"),
        FormField("medium_resistance_stderr", "… its standard error", "medium_resistance",
          "optional, from the lab fit; in R_m's unit", optional=True, unit_of="medium_resistance"),
        FormField("resistance_medium_correlation", "… correlation with α", "ratio",
          "optional, from the lab fit (−1 to 1; one t/V line gives about −0.9)", optional=True),
    ]),
    Group("press", "Press", [
        Choice("press.geometry", "Press given as", [
            ("area", "total filter area", [FormField("press.filter_area", "Total filter area", "area",
                                            "both faces of every chamber")]),
            ("plates", "plates and chambers", [
                FormField("press.plate_face_area", "Filter area per chamber face", "area", "e.g. about 1.8 m² for 1.5 m plates"),
                FormField("press.chambers", "Number of chambers", "count", "plates in the pack minus one"),
            ]),
        ]),
        FormField("press.chamber_thickness", "Chamber thickness", "length", "typically {usual}"),
        FormField("press.fill_fraction", "Usable chamber fill", "fraction",
          "share of chamber volume the cake may fill; {usual}", optional=True),
    ]),
    Group("feed", "Feed", [
        Choice("feed.mode", "Feed", sent=True, options=[
            ("constant_pressure", "constant pressure", [FormField("feed.pressure", "Feed pressure", "pressure",
                                                          "drop across cake and cloth; presses run about {usual}")]),
            ("constant_rate", "positive-displacement pump", [
                FormField("feed.flow", "Set flow", "flow", "filtrate flow while below the maximum pressure"),
                FormField("feed.max_pressure", "Maximum pressure", "pressure", "relief or set pressure, then held; usually {usual}"),
            ]),
            ("pump_curve", "centrifugal pump curve", [
                FormField("feed.points", "Pump curve (flow, pressure per line)", "curve", "pressure must fall as flow rises"),
                FormField("feed.max_pressure", "Relief pressure", "pressure", "blank: none; usually {usual}", optional=True),
            ]),
            ("pressure_steps", "pressure in steps", [
                FormField("feed.steps", "Steps (pressure, duration per line)", "steps", "the last step is held"),
            ]),
        ]),
    ]),
    Group("cycle", "Cycle", [
        FormField("cycle.downtime", "Downtime per cycle", "time",
                  "open, discharge, clean cloths, close; typically {usual}; or leave blank and give its parts"),
        FormField("cycle.downtime_parts.fixed", "… or its parts: fixed per cycle", "time",
                  "open, close and start of discharge", optional=True),
        FormField("cycle.downtime_parts.per_chamber", "… plus per chamber", "time",
                  "plate shifting and discharge of one chamber; needs plates and chambers", optional=True),
        FormField("cycle.downtime_parts.cloth_wash.time", "… plus a cloth wash of", "time",
                  "one wash of every cloth", optional=True),
        FormField("cycle.downtime_parts.cloth_wash.every_cycles", "… every (cycles)", "count",
                  "a number of cycles, or best (needs the cloth's wear)", optional=True),
        FormField("cloth.resistance_growth_per_cycle", "Cloth wear per cycle", "medium_resistance",
                  "cloth resistance added each cycle since a wash", optional=True),
        FormField("cycle.wash_ratio", "Wash ratio", "ratio", "wash volumes per volume below, typically {usual}; "
                  "0 = no washing", optional=True),
        FormField("cycle.wash_basis", "… counted per", "wash_basis", "displacement washes count cake pore volumes"),
        FormField("cycle.washing", "Washing", "washing", "through-washing: wash rate 1/4 of the final rate"),
        FormField("cycle.wash_pressure", "Wash pressure", "pressure", "blank: the filtration pressure", optional=True),
        FormField("cycle.wash_viscosity", "Wash liquid viscosity", "viscosity", "blank: the filtrate's", optional=True),
        Choice("cycle.end.criterion", "End filtration at", sent=True, options=[
            ("best", "best throughput", []),
            ("chambers_full", "full chambers", []),
            ("time", "a set time", [FormField("cycle.end.time", "Filtration time", "time", "from the start of feeding")]),
            ("flow", "a filtrate flow", [
                FormField("cycle.end.flow", "Flow below", "flow", "give one of these three: the filtrate flow", optional=True),
                FormField("cycle.end.flow_per_area", "… or flow per filter area below", "flux", "usually {usual}", optional=True),
                FormField("cycle.end.flow_fraction", "… or share of the initial flow below", "fraction", "e.g. 10 %", optional=True),
            ]),
            ("pressure", "a terminal pressure", [FormField("cycle.end.pressure", "Terminal pressure", "pressure",
                                                   "for pump feeds whose pressure rises")]),
        ]),
    ]),
    Group("stages", "Wash quality, squeeze and blow", [
        Choice("cycle.wash_model.kind", "Wash quality model", [
            ("none", "none (wash time only)", []),
            ("dispersion", "axial dispersion", [FormField(
                "cycle.wash_model.dispersion_number", "Dispersion number D_n", "ratio",
                "from a lab wash test; typically {usual} (higher: closer to plug flow)")]),
            ("efficiency", "wash efficiency", [FormField(
                "cycle.wash_model.efficiency", "Wash efficiency E", "fraction",
                "(1 − E)^N of the solute stays after N pore volumes")]),
        ]),
        FormField("cycle.wash_target.solute_removal", "Wash until solute removed", "fraction",
                  "instead of a wash ratio; needs a wash model", optional=True),
        FormField("cycle.squeeze.pressure", "Membrane squeeze pressure", "pressure",
                  "blank: no squeeze; membrane plates usually {usual}; C_e and the equilibrium below belong to "
                  "this pressure: change them with it", optional=True),
        FormField("cycle.squeeze.time", "Squeeze time", "time",
                  "or a consolidation ratio below; both blank with a moisture specification: the best cycle "
                  "chooses it", optional=True),
        FormField("cycle.squeeze.consolidation", "… or squeeze to consolidation", "fraction",
                  "average consolidation ratio U_c, e.g. 90 %", optional=True),
        FormField("cycle.squeeze.consolidation_coefficient", "Consolidation coefficient C_e", "diffusivity",
                  "from a lab squeeze test (Lab page); typically {usual}", optional=True),
        FormField("cycle.squeeze.creep_fraction", "Creep share B", "fraction", "0 without creep (secondary "
                  "consolidation)", optional=True),
        FormField("cycle.squeeze.creep_rate", "Creep rate η", "rate", "needed when the creep share is above 0",
                  optional=True),
        Choice("cycle.squeeze.equilibrium", "Squeezed cake at equilibrium", [
            ("moisture", "moisture", [FormField("cycle.squeeze.final_moisture", "Equilibrium moisture", "fraction",
                                                "the cake squeezed to the end at this pressure", optional=True)]),
            ("porosity", "porosity", [FormField("cycle.squeeze.final_porosity", "Equilibrium porosity", "fraction",
                                                "the cake squeezed to the end at this pressure", optional=True)]),
        ]),
        FormField("cycle.blow.curve", "Lab blow curve (time, moisture per line)", "blowcurve",
                  "blank: no blow; measured at the press's blow pressure on the same cake", optional=True),
        FormField("cycle.blow.lab_thickness", "Lab cake thickness", "length", "scaled to the press cake by the "
                  "square of the thickness ratio (same cake, same pressure only)", optional=True),
        FormField("cycle.blow.time", "Blow time", "time", "or a target moisture below; both blank with a moisture "
                  "specification: the best cycle chooses it", optional=True),
        FormField("cycle.blow.target_moisture", "… or blow to moisture", "fraction", "within the lab curve",
                  optional=True),
        FormField("cycle.stages", "Order after filtration", "stage_order", "the blow always comes last"),
        FormField("cycle.specs.max_moisture", "Specification: cake moisture at most", "fraction",
                  "the best cycle squeezes and blows as long as this needs", optional=True),
        FormField("cycle.specs.min_solute_removal", "Specification: solute removed at least", "fraction",
                  "needs a wash model; without a wash ratio it sets the wash", optional=True),
        FormField("cycle.fill_time", "Filling time", "time_or_pump",
                  "before filtration; blank: counted in filtration; pump: chambers and manifold at the pump's "
                  "highest flow", optional=True),
        FormField("cycle.manifold_volume", "… manifold volume", "volume", "filled with the chambers (pump filling)",
                  optional=True),
    ]),
    Group("target", "Production target", [
        Choice("target.basis", "Check against", [
            ("none", "no target", []),
            ("solids", "dry solids", [FormField("target.solids_throughput", "Required dry solids", "mass_rate",
                                        "averaged over the day")]),
            ("filtrate", "filtrate", [FormField("target.filtrate_throughput", "Required filtrate", "flow",
                                        "averaged over the day")]),
        ]),
        FormField("target.hours_per_day", "Press running hours per day", "hours",
          "availability after maintenance and stops; blank: 24 h", optional=True),
    ]),
    Group("compare", "Compare", [
        FormField("compare_thicknesses", "Chamber thicknesses to compare", "length_list", "e.g. 25, 32, 40", optional=True),
    ]),
]

def split_quantity(value, kind: str) -> tuple[str, str]:
    """A stored input ("58 %", 0.18, "7 bar") as (number text, unit choice) for the form."""
    choices = [u for _, u in UNIT_CHOICES.get(kind, [("", "")])]
    if isinstance(value, bool) or value is None:
        return "", choices[0]
    if isinstance(value, int | float):
        bare = {"temperature": "degC", "fraction": ""}.get(kind, "" if "" in choices else None)
        if bare is not None and bare in choices:
            return repr(value) if isinstance(value, float) else str(value), bare
        return _si_to_choice(float(value), kind, choices)
    from .units import UnitError, split_number

    text = str(value).strip()
    try:
        unit = split_number(text)[1]
    except UnitError:
        return text, choices[0]
    number = text[: len(text) - len(unit)].strip() if unit else text
    normal = unit.replace("**", "^").replace(" ", "")
    for u in choices:
        if u.replace(" ", "") == normal:
            return number, u
    return _si_to_choice(_parse_si(str(value), kind), kind, choices)


def _parse_si(text: str, kind: str) -> float:
    from .units import parse_quantity

    return parse_quantity(text, _UNIT_KIND.get(kind, kind))


_UNIT_KIND = {"concentration": "density", "ratio": "fraction", "count": "fraction", "curve": "fraction",
              "time_or_pump": "time"}


def _si_to_choice(si: float, kind: str, choices) -> tuple[str, str]:
    """An SI value shown in the field's first unit choice."""
    from .units import parse_quantity

    unit = choices[0]
    one = parse_quantity(f"1 {unit}", _UNIT_KIND.get(kind, kind)) if unit else 1.0
    zero = parse_quantity(f"0 {unit}", _UNIT_KIND.get(kind, kind)) if unit else 0.0
    return f"{(si - zero) / (one - zero):.6g}", unit


def value_at(inputs: dict, path: str):
    """The value at a dotted path of a request ("cake.moisture"), or None."""
    node = inputs
    for part in path.split("."):
        if not isinstance(node, dict) or part not in node:
            return None
        node = node[part]
    return node


class PrefillError(ValueError):
    """A prefill value the form cannot show (wrong type or unreadable); ``path`` names the field."""

    def __init__(self, path: str, message: str):
        super().__init__(f"{path}: {message}")
        self.path, self.message = path, message


def prefill(inputs: dict) -> dict:
    """Form state from a stored request: {path: (number, unit)} and {choice name: option}.

    Raises PrefillError for a value of the wrong shape (a link's prefill is typed by hand).
    """
    values, choices = {}, {}
    for group in GROUPS:
        for item in group.items:
            if isinstance(item, Choice):
                picked, most = item.options[0][0], 0
                for value, _, fields in item.options:
                    if item.sent:
                        if value_at(inputs, item.name) == value:
                            picked = value
                        continue
                    # the option that holds most of the given fields ("dry bulk density and
                    # moisture" over "moisture" when both are given; the first on a tie)
                    present = sum(value_at(inputs, f.path) is not None for f in fields)
                    if present > most:
                        picked, most = value, present
                choices[item.name] = picked
                for value, _, fields in item.options:
                    for f in fields:
                        if value == picked or f.path not in values:
                            _fill(values, f, inputs, value == picked)
            else:
                _fill(values, item, inputs, True)
    return {"values": values, "choices": choices}


_SCALAR = (int, float, str)


def _pairs(raw, path: str, what: str) -> list:
    if not isinstance(raw, list) or not all(
        isinstance(p, list | tuple) and len(p) == 2 and all(isinstance(x, _SCALAR) for x in p) for p in raw
    ):
        raise PrefillError(path, f"must be a list of [{what}] pairs")
    return raw


def _fill(values: dict, f: FormField, inputs: dict, chosen: bool) -> None:
    raw = value_at(inputs, f.path) if chosen else None
    try:
        _fill_value(values, f, raw)
    except PrefillError:
        raise
    except (TypeError, ValueError, ArithmeticError) as exc:  # units.UnitError is a ValueError
        raise PrefillError(f.path, f"cannot show {raw!r}: {exc}") from None


def _fill_value(values: dict, f: FormField, raw) -> None:
    if raw is not None and f.kind in ("curve", "steps"):
        raw = _pairs(raw, f.path, "flow, pressure" if f.kind == "curve" else "pressure, duration")
    elif raw is not None and f.kind == "length_list":
        if not isinstance(raw, list) or not all(isinstance(x, _SCALAR) for x in raw):
            raise PrefillError(f.path, "must be a list of thicknesses")
    elif raw is not None and f.kind == "stage_order":
        if not isinstance(raw, list) or not all(isinstance(x, str) for x in raw):
            raise PrefillError(f.path, "must be a list of stage names")
    elif raw is not None and f.kind == "blowcurve":
        pass  # checked as pairs below
    elif raw is not None and (isinstance(raw, bool) or not isinstance(raw, _SCALAR)):
        raise PrefillError(f.path, "must be a number or a quantity such as \"5 bar\"")
    if f.kind == "curve":
        pts = raw or []
        values[f.path] = ("\n".join(f"{_num(q, 'flow')}, {_num(p, 'pressure')}" for q, p in pts), "m^3/h|bar")
    elif f.kind == "steps":
        st = raw or []
        values[f.path] = ("\n".join(f"{_num(p, 'pressure')}, {_num(d, 'time')}" for p, d in st), "bar|min")
    elif f.kind == "length_list":
        Ls = raw or []
        values[f.path] = (", ".join(_num(L, "length") for L in Ls), "mm")
    elif f.kind == "count" and raw == "best":
        values[f.path] = ("best", "")
    elif f.kind == "blowcurve":
        pts = _pairs(raw, f.path, "time, moisture") if raw is not None else []
        values[f.path] = ("\n".join(f"{_num(t, 'time')}, {_percent(m)}" for t, m in pts), "min|%")
    elif f.kind == "stage_order":
        order = raw if isinstance(raw, list) else []
        values[f.path] = (",".join(order) if order else "", "")
    elif f.kind == "time_or_pump" and isinstance(raw, str) and raw.strip().lower() == "pump":
        values[f.path] = ("pump", "min")
    elif f.kind == "washing":
        values[f.path] = (raw or "through", "")
    elif f.kind == "wash_basis":
        values[f.path] = (raw or "filtrate", "")
    elif f.unit_of is not None:
        unit = values.get(f.unit_of, ("", f.units[0][1]))[1]
        values[f.path] = (_in_unit(raw, f.kind, unit) if raw is not None else "", unit)
    else:
        values[f.path] = split_quantity(raw, f.kind) if raw is not None else ("", f.units[0][1])


def _percent(value) -> str:
    """A stored fraction (0.24 or "24 %") as a number of per cent."""
    return f"{100.0 * _parse_si(value if isinstance(value, str) else f'{value}', 'fraction'):.6g}"


def _in_unit(raw, kind: str, unit: str) -> str:
    """A stored value shown in ``unit`` (a standard error in its value's unit)."""
    number, given = split_quantity(raw, kind)
    if given == unit:
        return number
    si = _parse_si(raw if isinstance(raw, str) else f"{raw}", kind)
    return _si_to_choice(si, kind, [unit])[0]


def _num(value, kind: str) -> str:
    """A stored list entry in the list's fixed unit (m³/h, bar, min, mm)."""
    unit = {"flow": "m^3/h", "pressure": "bar", "time": "min", "length": "mm"}[kind]
    number, u = split_quantity(value, kind)
    if u == unit:
        return number
    return _si_to_choice(_parse_si(value if isinstance(value, str) else f"{value} {_SI[kind]}", kind), kind, [unit])[0]


_SI = {"flow": "m^3/s", "pressure": "Pa", "time": "s", "length": "m"}


#: Labels that read on their own where the form's "… measured at" leans on the field above.
FULL_LABELS = {
    "cake.resistance_stderr": "Standard error of α",
    "cake.reference_pressure": "Pressure at which α was measured",
    "medium_resistance_stderr": "Standard error of R_m",
    "cake.compressibility_stderr": "Standard error of s",
    "resistance_medium_correlation": "Correlation of the errors of α and R_m",
    "cycle.wash_basis": "Wash ratio counted per",
    "cycle.end.flow": "End at a filtrate flow below",
    "cycle.end.flow_per_area": "End at a flow per filter area below",
    "cycle.end.flow_fraction": "End at a share of the initial flow below",
    "target.hours_per_day": "Press running hours per day",
    "cycle.downtime_parts.fixed": "Fixed downtime per cycle",
    "cycle.downtime_parts.per_chamber": "Downtime per chamber",
    "cycle.downtime_parts.cloth_wash.time": "Cloth wash time",
    "cycle.downtime_parts.cloth_wash.every_cycles": "Cycles between cloth washes",
    "cycle.squeeze.consolidation": "Squeeze to an average consolidation ratio",
    "cycle.blow.target_moisture": "Blow to a cake moisture",
    "cycle.manifold_volume": "Manifold volume filled with the chambers",
}

#: The label people see for each input path (for messages about a field, such as input_warnings).
LABELS = {}
for _group in GROUPS:
    for _item in _group.items:
        for _field in ([f for _, _, fields in _item.options for f in fields] if isinstance(_item, Choice) else [_item]):
            LABELS.setdefault(_field.path, _field.full_label)


#: Inputs the form does not show, as people read them (a copy keeps them unchanged).
CARRIED_WORDS = {
    "cake.local": "the cake's local laws (from a compression–permeability test)",
    "cake.tested_pressure_range": "the lab tests' pressure range",
}


def _form_paths() -> set[str]:
    paths = set()
    for group in GROUPS:
        for item in group.items:
            if isinstance(item, Choice):
                if item.sent:
                    paths.add(item.name)
                paths.update(f.path for _, _, fields in item.options for f in fields)
            else:
                paths.add(item.path)
    return paths


#: inputs the form sets by a choice rather than a field: the wash model's name follows from its
#: parameter (schemas.cycle.CycleIn infers it), so a copy must not carry the old one along
IMPLIED_PATHS = {"cycle.wash_model.model"}
FORM_PATHS = _form_paths() | IMPLIED_PATHS


def carried(inputs: dict, prefix: str = "") -> dict:
    """The part of ``inputs`` the form has no field for (newer or API-only inputs such as the
    cake's local laws): the editor sends it back unchanged, so a copy loses nothing."""
    out = {}
    for key, value in inputs.items():
        path = f"{prefix}{key}"
        if path in FORM_PATHS:
            continue
        if isinstance(value, dict) and any(p.startswith(path + ".") for p in FORM_PATHS):
            inner = carried(value, path + ".")
            if inner:
                out[key] = inner
        else:
            out[key] = value
    return out


def carried_words(kept: dict, prefix: str = "") -> list[str]:
    """What ``carried`` keeps, in words for the note beside the form."""
    words = []
    for key, value in kept.items():
        path = f"{prefix}{key}"
        if path in CARRIED_WORDS:
            words.append(CARRIED_WORDS[path])
        elif isinstance(value, dict):
            words += carried_words(value, path + ".")
        else:
            words.append(path)
    return words
