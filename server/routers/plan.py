"""POST /api/v1/plan: a production plan for a scenario."""

import json
import re

from fastapi import APIRouter, HTTPException, Request
from fastapi.responses import HTMLResponse
from pydantic import ValidationError

from ..budget import within_budget
from ..charts import compact
from ..display import Units, UnitSystem
from ..errors import InputError
from ..plan import make_plan
from ..plancharts import plan_figures
from ..schemas.common import ERROR_RESPONSES
from ..schemas.plan import MAX_FLOW, MAX_SOLIDS_RATE, PlanRequest, PlanResponse
from ..schemas.quantities import bound_text
from ..solve import CAUTIONS
from ..units import UnitError, parse_quantity, split_number
from ..views import page_json

router = APIRouter(prefix="/api/v1", tags=["plan"], responses=ERROR_RESPONSES)


@router.post("/plan", response_model=PlanResponse)
async def post_plan(request: Request, plan: PlanRequest) -> dict:
    """Presses and chambers needed, whole cycles a shift, seasons, cloth washes, feed energy,
    and how sure the answer is (seeded Monte Carlo, sensitivity). Results are SI (see ``units``).
    """
    return await within_budget(request, make_plan, plan)


# ---- the Plan page -------------------------------------------------------------------------

pages = APIRouter(tags=["pages"], include_in_schema=False)

#: The plan form's fields: (query name, label, hint). Every value is read as the API reads it.
FORM_FIELDS = [
    ("amount", "Target per calendar day", 'with its unit: "120 t/day" dry solids, or m³/day of slurry or filtrate'),
    ("hours_per_day", "Hours a working day", "h, up to 24"),
    ("days_per_week", "Working days a week", "1 to 7"),
    ("availability", "Availability", "share of running hours the press cycles, e.g. 85 %"),
    ("margin", "Design margin", "extra capacity, e.g. 10 %"),
    ("spares", "Spare presses", "whole presses on top of those needed"),
    ("shift", "Shift length", 'e.g. "8 h"; empty: no shifts'),
    ("temperatures", "Season temperatures", 'separated by ; (e.g. 8; 20; 32 in °C, or "46 °F; 68 °F")'),
    ("pump_efficiency", "Feed pump efficiency", "e.g. 50 %"),
    ("samples", "Monte Carlo samples", "0 to 100,000"),
    ("seed", "Seed", "the same seed gives the same answer"),
]
#: the season temperatures' hint on a page in US units, where a bare number is refused
#: (temperatures_without_unit): the SI hint's bare "8; 20; 32 in °C" led a plant engineer there
#: into that refusal
US_TEMPERATURES_HINT = 'separated by ;, each with its unit (e.g. "46 °F; 68 °F; 90 °F")'


def form_fields(units: str) -> list[tuple[str, str, str]]:
    """The form's fields with the hints of the page's unit system."""
    if units != "us":
        return FORM_FIELDS
    return [(name, label, US_TEMPERATURES_HINT if name == "temperatures" else hint)
            for name, label, hint in FORM_FIELDS]


DEFAULT_FORM = {"basis": "dry_solids_per_day", "amount": "", "hours_per_day": "24", "days_per_week": "7",
                "availability": "100 %", "margin": "0 %", "spares": "1", "shift": "", "whole_cycles": "on",
                "temperatures": "", "pump_efficiency": "50 %", "samples": "10000", "seed": "1"}
CHART_LABELS = {"histogram": "Best throughput over the samples", "tornado": "Sensitivity", "seasons": "Seasons",
                "cloth": "Cloth-wash interval", "cycle_growth": "Cycle time as the cloth blinds"}
BASES = [("dry_solids_per_day", "dry solids"), ("slurry_per_day", "slurry"), ("filtrate_per_day", "filtrate")]
#: how people write a target of each basis, per unit system (the page's own units)
TARGET_UNITS = {"dry_solids_per_day": {"si": "t/day", "us": "short ton/day"},
                "slurry_per_day": {"si": "m³/day", "us": "US gal/day"},
                "filtrate_per_day": {"si": "m³/day", "us": "US gal/day"}}


def amount_without_unit(form: dict, units: str = "si") -> tuple[str, str] | None:
    """(field, message) when the page's target amount is a bare number. The API reads a bare
    number as SI (kg/s, m³/s), which a person typing "150" never means: the page asks for the
    unit instead of planning for 150 kg/s. None when the amount has a unit (or is no number:
    the schema says why)."""
    amount = form["amount"].strip()
    try:
        unit = split_number(amount)[1]
    except UnitError:
        return None
    if unit:
        return None
    key = form["basis"]
    written = TARGET_UNITS[key]["us" if units == "us" else "si"]
    kind, top = ("mass_rate", MAX_SOLIDS_RATE) if key == "dry_solids_per_day" else ("flow", MAX_FLOW)
    most = top / parse_quantity(f"1 {written}", kind)
    return (f"target.{key}",
            f'{amount} has no unit: write the target with its unit, such as "{amount} {written}" of '
            f"{dict(BASES)[key]} per calendar day (allowed: above 0 and at most {bound_text(most, 4)} {written})")


#: the unit the API reads a bare target number in (SI), written out when a saved plan refills the form
SI_TARGET_UNITS = {"dry_solids_per_day": "kg/s", "slurry_per_day": "m^3/s", "filtrate_per_day": "m^3/s"}


def temperatures_without_unit(form: dict, units: str) -> tuple[str, str] | None:
    """(field, message) when a page in US units has a season temperature typed as a bare
    number: the API reads it in °C, which a person on a page showing °F may not mean."""
    if units != "us":
        return None
    for text in (t.strip() for t in re.split(r";|,\s+", form["temperatures"]) if t.strip()):
        try:
            bare = not split_number(text)[1]
        except UnitError:
            continue  # not a number: the schema says why
        if bare:
            return ("temperatures", f'{text} has no unit: on a page in US units write each season temperature '
                                    f'with its unit, such as "{text} °F" (or "{text} °C")')
    return None


def form_from_plan(plan: dict) -> dict:
    """The form's values from saved plan inputs (a plan request without its inputs). A target
    saved as a bare number (the API's SI) is written with its SI unit, and a bare season
    temperature with °C, so the form sent again means what was saved."""
    form = dict(DEFAULT_FORM)
    target = plan.get("target", {})
    for key, _ in BASES:
        if key in target:
            value = target[key]
            bare = isinstance(value, int | float) and not isinstance(value, bool)
            form["basis"], form["amount"] = key, f"{value} {SI_TARGET_UNITS[key]}" if bare else str(value)
    for key in ("hours_per_day", "days_per_week", "availability", "margin", "pump_efficiency"):
        if key in target:
            form[key] = str(target[key])
    for key in ("spares", "samples", "seed"):
        if key in plan:
            form[key] = str(plan[key])
    shift = plan.get("shift") or {}
    form["shift"] = str(shift.get("length", ""))
    form["whole_cycles"] = "on" if shift.get("whole_cycles", True) else ""
    form["temperatures"] = "; ".join(f"{t} °C" if isinstance(t, int | float) and not isinstance(t, bool) else str(t)
                                     for t in plan.get("temperatures", []))
    return form


def form_from_scenario_target(inputs: dict) -> dict:
    """The form filled from the scenario's own production target, where it has one (dry solids
    or filtrate, averaged over the calendar day, and the running hours)."""
    form = dict(DEFAULT_FORM)
    target = inputs.get("target") if isinstance(inputs, dict) else None
    if not isinstance(target, dict):
        return form
    for key, basis in (("solids_throughput", "dry_solids_per_day"), ("filtrate_throughput", "filtrate_per_day")):
        if isinstance(target.get(key), str):
            form["basis"], form["amount"] = basis, target[key]
    if isinstance(target.get("hours_per_day"), int | float | str):
        form["hours_per_day"] = str(target["hours_per_day"])
    return form


def plan_from_form(form: dict) -> dict:
    """Plan inputs (a plan request without its inputs) from the form's values, as typed."""
    target = {form["basis"]: form["amount"].strip()}
    for key in ("hours_per_day", "days_per_week"):
        target[key] = _number(form[key])
    for key in ("availability", "margin", "pump_efficiency"):
        target[key] = form[key].strip()
    plan = {"target": target, "spares": _number(form["spares"]), "samples": _number(form["samples"]),
            "seed": _number(form["seed"])}
    if form["shift"].strip():
        plan["shift"] = {"length": form["shift"].strip(), "whole_cycles": form["whole_cycles"] == "on"}
    temps = [t.strip() for t in re.split(r";|,\s+", form["temperatures"]) if t.strip()]
    if temps:
        plan["temperatures"] = [_number(t) for t in temps]
    return plan


def _number(text: str):
    """A plain number typed in a form field as a number (JSON), else the text (the schema says why)."""
    text = str(text).strip()
    try:
        value = float(text)
    except ValueError:
        return text
    return int(value) if value.is_integer() and "." not in text and "e" not in text.lower() else value


async def plan_page(request: Request, title: str, inputs: dict, saved_plan: dict | None, query: dict,
                    back: str, parent_id: str | None, units: str = "si"):
    """The Plan page of a scenario: its form, and the plan when the form (or the saved plan) gives one."""
    given = {k: v for k, v in query.items() if k in DEFAULT_FORM}
    if given:
        form = {**DEFAULT_FORM, "whole_cycles": "", **given}
        if form["basis"] not in dict(BASES):
            form["basis"] = "dry_solids_per_day"
    elif saved_plan:
        form = form_from_plan(saved_plan)
    else:
        form = form_from_scenario_target(inputs)
    context = {"title": title, "form": form, "fields": form_fields(units), "bases": BASES, "back": back,
               "plan": None, "errors": [], "field_errors": {}, "figures": "{}", "u": Units(units),
               "inputs_json": json.dumps(inputs),
               # the seasons use water's viscosity at each temperature (server/plan.py _season): said
               # when the scenario gives its own (a plant-engineer check found it silently dropped)
               "viscosity_given": (inputs.get("slurry") or {}).get("viscosity") is not None,
               "plan_json": "", "parent_id": parent_id or "", "saved_plan": saved_plan, "cautions": CAUTIONS}
    # a plan is worked out when asked for (the form sent) or saved; a scenario's own target
    # only fills the form. The form sent without a target is said so at its field (Plan did
    # nothing and said nothing: a plant-engineer check)
    if given and not form["amount"].strip():
        written = TARGET_UNITS[form["basis"]]["us" if units == "us" else "si"]
        _place_errors(context, [(("body", "target"), f'give one, with its unit, such as '
                                                     f'"120 {written}"')])
    elif form["amount"].strip() and (given or saved_plan):
        plan_inputs = plan_from_form(form)
        context["plan_json"] = json.dumps(plan_inputs)
        bare = (amount_without_unit(form, units) or temperatures_without_unit(form, units)) if given else None
        # a number without its unit is refused with the form's other mistakes, not instead of
        # them (one at a time made an engineer send the form again for each: a plant-engineer check)
        refused = [(("body", *bare[0].split(".")), bare[1])] if bare is not None else []
        try:
            try:
                req = PlanRequest.model_validate({**plan_inputs, "inputs": inputs})
            except ValidationError as exc:
                said = {form_field(loc)[0] for loc, _ in refused}
                raise InputError(refused + [(loc, msg) for loc, msg in InputError.from_validation(exc, ()).errors
                                            if form_field(loc)[0] not in said]) from None
            if refused:
                raise InputError(refused)
            result = await within_budget(request, make_plan, req)
        except InputError as exc:
            _place_errors(context, exc.errors)
        else:
            context["plan"] = result
            context["press_chambers"] = req.inputs.press.chambers
            figures = plan_figures(result, Units(units))
            context["figures"] = page_json(compact(figures))
            context["charts"] = [(key, CHART_LABELS[key]) for key in figures]
    return request.app.state.templates.TemplateResponse(request, "plan.html", context)


def _where(loc) -> str:
    return ".".join(str(p) for p in loc if p != "body") or "plan"


#: the plan request's fields (under "body") that a form field of the page fills
_FORM_OF = {("target", key): key for key in ("hours_per_day", "days_per_week", "availability", "margin",
                                              "pump_efficiency")}
_FORM_OF.update({("target", key): "amount" for key, _ in BASES})
_FORM_OF.update({(key,): key for key in ("spares", "samples", "seed", "shift", "temperatures")})
_FORM_OF[("target",)] = "amount"


def form_field(loc) -> tuple[str | None, str]:
    """The form field a refusal concerns (None: not one of the form's, such as the scenario's
    own inputs) and the rest of its place in words (the temperature's number in the list)."""
    path = tuple(p for p in loc if p != "body")
    for k in (2, 1):
        name = _FORM_OF.get(path[:k])
        if name is not None:
            rest = path[k:]
            if name == "temperatures" and rest and isinstance(rest[0], int):
                return name, f"temperature {rest[0] + 1} in the list"
            if name == "shift" and rest and rest[0] == "whole_cycles":
                return name, "whole cycles only"
            return name, ""
    return None, ""


def _place_errors(context: dict, errors) -> None:
    """A refusal at the form field it concerns, in the field's words (the page named the API's
    path, "target.availability", under the Plan button: a plant-engineer check); one about the
    scenario's own inputs under the form, with its path among them."""
    labels = {name: label for name, label, _ in FORM_FIELDS}
    at_fields, rest = {}, []
    for loc, msg in errors:
        name, detail = form_field(loc)
        if name is None:
            where = _where(loc)
            rest.append(("The scenario's " + where.removeprefix("inputs.") if where.startswith("inputs.") else where,
                         msg))
        else:
            at_fields.setdefault(name, []).append((labels[name] + (f" ({detail})" if detail else ""), msg))
    context["errors"], context["field_errors"] = rest, at_fields


@pages.get("/s/{sid}/plan", response_class=HTMLResponse)
async def saved_plan_page(request: Request, sid: str, units: UnitSystem = "si"):
    from .scenarios import _get_or_404

    s = _get_or_404(request, sid)
    return await plan_page(request, s.name, s.inputs, s.results.get("plan_inputs"), dict(request.query_params),
                     f"/s/{sid}", sid, units)


@pages.get("/demo/{slug}/plan", response_class=HTMLResponse)
async def demo_plan_page(request: Request, slug: str, units: UnitSystem = "si"):
    from .pages import _demos

    demo = next((d for d in _demos(request) if d.slug == slug), None)
    if demo is None:
        raise HTTPException(404, f"no demo scenario named {slug!r}")
    return await plan_page(request, demo.name, demo.inputs, None, dict(request.query_params), f"/demo/{slug}", None,
                           units)
