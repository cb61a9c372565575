
"""The editor's field table (server/forms.py): every field is a request field, every feed mode
and end criterion is offered, and a demo put into the form comes back as the same inputs.

``collect`` below does in Python what static/js/editor.js does in the browser (the browser
tests drive the real script); it reads the form state that ``prefill`` gives the template.
"""

from typing import Annotated, get_args, get_origin

import pytest
from pydantic import BaseModel

from server.forms import GROUPS, UNIT_CHOICES, Choice, FormField, prefill, split_quantity
from server.schemas.cycle import FEED_MODES, CycleRequest
from server.solver.cycle import END_CRITERIA
from tests.test_pages import DEMOS


def fields_and_choices():
    for group in GROUPS:
        for item in group.items:
            yield item
            if isinstance(item, Choice):
                for _, _, fields in item.options:
                    yield from fields


def _submodels(annotation) -> list:
    """The pydantic models a field's annotation may hold (through unions and Optional)."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return [annotation]
    if get_origin(annotation) is Annotated:  # a discriminated union inside Optional
        return _submodels(get_args(annotation)[0])
    return [m for a in get_args(annotation) for m in _submodels(a)]


def request_has(path: str) -> bool:
    """Whether a dotted path names a field of the cycle request (through the feed union)."""
    models = [CycleRequest]
    for part in path.split("."):
        holders = [m for m in models if part in m.model_fields]
        if not holders:
            return False
        models = [sub for m in holders for sub in _submodels(m.model_fields[part].annotation)]
    return True


def test_the_path_check_itself_refuses_what_is_not_there():
    assert request_has("feed.points") and request_has("cycle.end.flow_fraction")
    assert not request_has("feed.bogus") and not request_has("slurry.pressure.x")


def test_every_form_field_is_a_field_of_the_request():
    for item in fields_and_choices():
        if isinstance(item, FormField):
            assert request_has(item.path), item.path
        elif item.sent:
            assert request_has(item.name), item.name


def test_the_form_offers_every_feed_mode_and_end_criterion_and_nothing_else():
    choices = {item.name: item for item in fields_and_choices() if isinstance(item, Choice)}
    feed_options = [value for value, _, _ in choices["feed.mode"].options]
    assert sorted(feed_options) == sorted(FEED_MODES) and len(set(feed_options)) == len(feed_options)
    assert [value for value, _, _ in choices["cycle.end.criterion"].options] == list(END_CRITERIA)


def test_every_field_kind_has_units_to_choose():
    for item in fields_and_choices():
        if isinstance(item, FormField) and item.kind not in ("curve", "steps", "length_list"):
            assert UNIT_CHOICES[item.kind], item.path


def _set(body: dict, path: str, value) -> None:
    *parents, last = path.split(".")
    for p in parents:
        body = body.setdefault(p, {})
    body[last] = value


def _quantity(number: str, unit: str):
    return f"{number} {unit}" if unit else float(number)


def collect(state: dict) -> dict:
    """The request the editor sends for a form state (as static/js/editor.js builds it)."""
    values, choices, body = state["values"], state["choices"], {}
    for group in GROUPS:
        for item in group.items:
            if isinstance(item, Choice):
                picked = choices[item.name]
                if item.sent:
                    _set(body, item.name, picked)
                fields = next(fields for value, _, fields in item.options if value == picked)
            else:
                fields = [item]
            for f in fields:
                text, unit = values[f.path]
                if not str(text).strip():
                    continue
                if f.kind in ("curve", "steps", "blowcurve"):
                    u0, u1 = unit.split("|")
                    rows = [line.split(",") for line in text.splitlines() if line.strip()]
                    value = [[_quantity(a.strip(), u0), _quantity(b.strip(), u1)] for a, b in rows]
                elif f.kind == "length_list":
                    value = [_quantity(x.strip(), unit) for x in text.split(",")]
                elif f.kind == "count":
                    value = int(text)
                elif f.kind in ("washing", "wash_basis"):
                    value = text
                elif f.kind == "stage_order":
                    value = text.split(",")
                elif f.kind == "time_or_pump" and text.lower() == "pump":
                    value = "pump"
                else:
                    value = _quantity(text, unit)
                _set(body, f.path, value)
    return body


@pytest.mark.parametrize("demo", DEMOS, ids=lambda d: d.slug)
def test_a_demo_put_into_the_form_comes_back_as_the_same_inputs(demo):
    expected = CycleRequest.model_validate(demo.inputs).model_dump()
    again = CycleRequest.model_validate(collect(prefill(demo.inputs))).model_dump()
    assert _close(again, expected)


def _close(a, b, rel=1e-5):
    """Nested equality with a relative tolerance on floats (the form shows 6 significant figures)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), (a.keys(), b.keys())
        return all(_close(a[k], b[k], rel) for k in a)
    if isinstance(a, list | tuple):
        assert len(a) == len(b)
        return all(_close(x, y, rel) for x, y in zip(a, b))
    if isinstance(a, float) and isinstance(b, float):
        assert a == pytest.approx(b, rel=rel), (a, b)
        return True
    assert a == b
    return True


@pytest.mark.parametrize("value,kind,expected", [
    ("58 %", "fraction", ("58", "%")),
    (0.18, "fraction", ("0.18", "")),
    ("7 bar", "pressure", ("7", "bar")),
    (7e5, "pressure", ("7", "bar")),          # SI numbers show in the first unit offered
    ("40 mm", "length", ("40", "mm")),
    (20, "temperature", ("20", "degC")),       # a bare temperature is in °C, as in the API
    ("2 atm", "pressure", ("2", "atm")),  # atm is offered now (issue 10)
    ("2 kgf/cm^2", "pressure", ("1.96133", "bar")),  # a unit not offered converts to the first offered
])
def test_stored_values_split_into_number_and_unit_choice(value, kind, expected):
    number, unit = split_quantity(value, kind)
    assert unit == expected[1]
    assert float(number) == pytest.approx(float(expected[0]), rel=1e-6)


def test_a_choice_picks_the_option_whose_fields_the_inputs_hold():
    state = prefill({"slurry": {"solids_concentration": "120 kg/m^3"}, "feed": {"mode": "pump_curve"}})
    assert state["choices"]["slurry.basis"] == "concentration"
    assert state["choices"]["feed.mode"] == "pump_curve"
    assert state["choices"]["cycle.end.criterion"] == "best"  # nothing given: the first option


def test_inputs_the_form_does_not_show_are_carried_whole():
    from server.forms import carried, carried_words

    inputs = {"slurry": {"solids_mass_fraction": "20 %", "solids_density": "2600 kg/m^3", "temperature": 20},
              "cake": {"local": {"resistance_at_zero_stress": 1e11, "stress_scale": "0.1 bar"},
                       "tested_pressure_range": ["3 bar", "6 bar"], "moisture": "30 %"},
              "feed": {"mode": "constant_pressure", "pressure": "5 bar"}, "someday": {"x": 1}}
    kept = carried(inputs)
    assert kept == {"cake": {"local": inputs["cake"]["local"], "tested_pressure_range": ["3 bar", "6 bar"]},
                    "someday": {"x": 1}}
    assert carried_words(kept) == ["the cake's local laws (from a compression–permeability test)",
                                   "the lab tests' pressure range", "someday.x"]


def test_without_a_stage_order_the_form_sends_the_wash_before_the_squeeze():
    """The request's key order sets the stages' order when none is listed: the form lists the
    wash's fields before the squeeze's, as its order menu's default says."""
    inputs = next(d for d in DEMOS if d.slug == "hydroxide_membrane_wash").inputs
    inputs = {**inputs, "cycle": {k: v for k, v in inputs["cycle"].items() if k != "stages"}}
    inputs["cycle"] = {"squeeze": inputs["cycle"]["squeeze"], **inputs["cycle"]}  # squeeze first here
    assert CycleRequest.model_validate(inputs).cycle.order[:2] == ("squeeze", "wash")
    again = CycleRequest.model_validate(collect(prefill(inputs)))
    assert again.cycle.order[:2] == ("wash", "squeeze")


def test_the_wash_model_is_not_carried_so_the_form_can_change_it():
    """A plant engineer could not switch the membrane demo's wash model: its name was carried
    back unchanged beside the newly chosen model's parameter."""
    from server.forms import carried

    inputs = next(d for d in DEMOS if d.slug == "hydroxide_membrane_wash").inputs
    assert "wash_model" not in carried(inputs).get("cycle", {})
    state = prefill(inputs)
    state["choices"]["cycle.wash_model.kind"] = "efficiency"
    state["values"]["cycle.wash_model.efficiency"] = ("60", "%")
    sent = collect(state)
    assert CycleRequest.model_validate(sent).cycle.wash_model.model == "efficiency"
