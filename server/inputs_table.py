"""Inputs as people read them: each given input under the editor's label, its value as
entered with its unit written out ("4150 kg/m³", "30 m³/h at 7 bar; 60 m³/h at 5 bar").

Used where saved inputs are shown to people: the saved page (and its print), the compare page.
The field table is the editor's (forms.GROUPS), so labels never drift apart.
"""

from .forms import GROUPS, Choice, value_at
from .units import KINDS, UnitError, parse_quantity, split_number, written
from .views import power_of_ten

#: the SI unit a bare number of each form kind is in, as people write it
_BARE = {"pressure": "Pa", "length": "m", "area": "m²", "volume": "m³", "time": "s", "viscosity": "Pa·s",
         "density": "kg/m³", "concentration": "kg/m³", "specific_resistance": "m/kg",
         "medium_resistance": "1/m", "temperature": "°C", "flow": "m³/s", "flux": "m³/(m²·s)", "mass_rate": "kg/s",
         "hours": "h", "diffusivity": "m²/s", "rate": "1/s"}
def _unit(text: str) -> str:
    return written(text).replace("gpm", "US gpm")


def _value(raw, kind: str) -> str:
    """One value as entered, its unit written for people."""
    if isinstance(raw, bool) or raw is None:
        return "–"
    if isinstance(raw, int | float):
        unit = _BARE.get(kind, "")
        number = f"{raw:g}"
        return f"{power_of_ten(raw, None) if 'e' in number else number} {unit}".strip()
    text = " ".join(str(raw).split())
    try:
        bare = not split_number(text)[1]
    except UnitError:
        bare = False
    if bare and _BARE.get(kind):  # a number typed without its unit is in the bare unit: say which
        return f"{text} {_BARE[kind]}"
    return _unit(text)


def _pairs(raw, kinds: tuple[str, str], joiner: str) -> str:
    if not isinstance(raw, list):
        return _value(raw, "")
    out = []
    for p in raw:
        if isinstance(p, list | tuple) and len(p) == 2:
            out.append(f"{_value(p[0], kinds[0])} {joiner} {_value(p[1], kinds[1])}")
        else:
            out.append(_value(p, ""))
    return "; ".join(out)


#: how the cake is washed: the editor sends these choices with every request (their first
#: option), so they say nothing unless a wash is given
_WASH_CHOICES = ("cycle.washing", "cycle.wash_basis")
#: what only a wash uses: shown, if typed, as not used when no wash is given
_WASH_ONLY = ("cycle.wash_pressure", "cycle.wash_viscosity", "cycle.wash_model.")


def _washes(inputs: dict) -> bool:
    """Whether the inputs wash the cake: a wash ratio above 0, a wash target, or a solute
    removal specification (which sets the wash when no ratio is given: solver/stages.py)."""
    cycle = inputs.get("cycle") if isinstance(inputs.get("cycle"), dict) else {}
    specs = cycle.get("specs") if isinstance(cycle.get("specs"), dict) else {}
    if cycle.get("wash_target") is not None or specs.get("min_solute_removal") is not None:
        return True
    ratio = cycle.get("wash_ratio")
    if ratio is None:
        return False
    try:
        return parse_quantity(ratio, "fraction") > 0.0
    except UnitError:  # not readable (saved as typed): shown as it is
        return True


def input_rows(inputs: dict) -> list[tuple[str, str]]:
    """(label, value as entered) for every input given, in the editor's order. Without a wash
    the washing choices the editor always sends are left out, and a wash setting typed anyway
    is shown as not used."""
    rows: list[tuple[str, str]] = []
    seen: set[str] = set(() if _washes(inputs) else _WASH_CHOICES)
    unused = () if _washes(inputs) else _WASH_ONLY
    for group in GROUPS:
        for item in group.items:
            fields = []
            if isinstance(item, Choice):
                if item.sent:
                    chosen = value_at(inputs, item.name)
                    options = {value: label for value, label, _ in item.options}
                    if chosen is not None:
                        rows.append((item.label, options.get(chosen, str(chosen))))
                    fields = [f for value, _, fs in item.options if value == chosen for f in fs]
                else:
                    fields = [f for _, _, fs in item.options for f in fs]
            else:
                fields = [item]
            for f in fields:
                raw = value_at(inputs, f.path)
                if raw is None or f.path in seen:
                    continue
                seen.add(f.path)
                shown = _shown(raw, f.kind)
                if f.path.startswith(unused):
                    shown += " (not used: no wash given)"
                rows.append((f.full_label, shown))
    return rows


def _shown(raw, kind: str) -> str:
    if kind == "curve":
        return _pairs(raw, ("flow", "pressure"), "at")
    if kind == "steps":
        return _pairs(raw, ("pressure", "time"), "for")
    if kind == "blowcurve":
        if isinstance(raw, list):
            raw = [[t, _shown(m, "fraction")] if isinstance(m, int | float) and not isinstance(m, bool) else [t, m]
                   for t, m in (p if isinstance(p, list | tuple) and len(p) == 2 else (p, None) for p in raw)]
        return _pairs(raw, ("time", "fraction"), "→")
    if kind == "time_or_pump":
        return "at the pump's highest flow" if raw == "pump" else _value(raw, "time")
    if kind == "stage_order":
        return ", then ".join(str(x) for x in raw) if isinstance(raw, list) else str(raw)
    if kind == "length_list":
        return ", ".join(_value(x, "length") for x in raw) if isinstance(raw, list) else _value(raw, "length")
    if kind == "washing":
        words = {"through": "through-washing (wash plates)", "simple": "simple washing (filtrate path)"}
        return words.get(raw, str(raw))
    if kind == "wash_basis":
        return {"filtrate": "filtrate volume", "cake_pores": "cake pore volume"}.get(raw, str(raw))
    if kind in ("fraction", "ratio", "count") and isinstance(raw, int | float) and not isinstance(raw, bool):
        return f"{raw:g} ({100 * raw:.4g} %)" if kind == "fraction" else f"{raw:g}"
    return _value(raw, kind)


def compare_rows(all_inputs: list[dict]) -> list[tuple[str, list[str], bool]]:
    """(label, value per scenario, differ) over the union of the inputs given, in the editor's order."""
    per = [dict(input_rows(i)) for i in all_inputs]
    order: list[str] = []
    for rows in (input_rows(i) for i in all_inputs):
        for label, _ in rows:
            if label not in order:
                order.append(label)
    out = []
    for label in order:
        values = [p.get(label, "–") for p in per]
        out.append((label, values, len(set(values)) > 1))
    return out


assert set(_BARE) <= set(KINDS) | {"concentration"}
