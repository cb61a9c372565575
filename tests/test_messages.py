"""Refusals in the tool's words: in the unit the person used, 4 significant figures, percent
as percent, never a library's phrasing; an exact bound in another unit is accepted."""

import copy

import pytest

from tests.conftest import BASE_REQUEST


def _msg(client, change, field, path="/api/v1/cycle", wrap=None):
    body = copy.deepcopy(BASE_REQUEST)
    change(body)
    r = client.post(path, json=wrap(body) if wrap else body)
    assert r.status_code == 422, r.text
    return {d["field"]: d["msg"] for d in r.json()["detail"]}[field]


def test_a_percent_field_is_answered_in_percent(client):
    msg = _msg(client, lambda b: b["slurry"].update(solids_mass_fraction="120 %"), "slurry.solids_mass_fraction")
    assert "below 100 %" in msg and "got 120 %" in msg
    # in % alone: "(above 0 and at most 1); got 150 % (1.5)" repeated the bounds as a fraction (a
    # plant-engineer check)
    assert msg.endswith("; got 120 %") and "(" not in msg, msg


def test_a_pressure_in_bar_is_answered_in_bar_with_si_beside(client):
    msg = _msg(client, lambda b: b["feed"].update(pressure="-3 bar"), "feed.pressure")
    assert "at least 0.001 bar and at most 1000 bar" in msg and "got -3 bar" in msg and "(-300000 Pa)" in msg


def _temperature(value):
    def change(b):
        b["slurry"].pop("viscosity")
        b["slurry"]["temperature"] = value
    return change


@pytest.mark.parametrize("change, field, expected", [
    # units as people write them, not as the parser spells them ("degC", "m^2", "kg/m^3": a
    # plant-engineer check); a temperature typed in °C is said once, not again "(... degC)" beside it
    (_temperature(200), "slurry.temperature", "must be above 0 °C and below 100 °C; got 200 °C"),
    (_temperature("200 degC"), "slurry.temperature", "must be above 0 °C and below 100 °C; got 200 °C"),
    (_temperature("392 degF"), "slurry.temperature",
     "must be above 32 °F and below 212 °F (above 0 °C and below 100 °C); got 392 °F (200 °C)"),
    (lambda b: b["press"].update(filter_area="1e9 cm^2"), "press.filter_area",
     "must be at least 10 cm² and at most 1e8 cm² (at least 0.001 m² and at most 10000 m²); got 1e9 cm² (100000 m²)"),
    (lambda b: b["slurry"].update(solids_density="30 g/cm^3"), "slurry.solids_density",
     "must be at least 0.1 g/cm³ and at most 25 g/cm³ (at least 100 kg/m³ and at most 25000 kg/m³); "
     "got 30 g/cm³ (30000 kg/m³)"),
    (lambda b: b["slurry"].update(viscosity="20000 mPa*s"), "slurry.viscosity",
     "must be at least 0.01 mPa·s and at most 10000 mPa·s (at least 1e-5 Pa·s and at most 10 Pa·s); "
     "got 20000 mPa·s (20 Pa·s)"),
    # below a million, digits as people write them, not a power of ten ("1.45e4 psi" read as a
    # slip of the tool: a plant-engineer check)
    (lambda b: b["feed"].update(pressure="20000 psi"), "feed.pressure",
     "must be at least 0.0145 psi and at most 14500 psi (at least 100 Pa and at most 1e8 Pa); "
     "got 20000 psi (1.37895e8 Pa)"),
])
def test_a_refusal_writes_units_as_people_write_them(client, change, field, expected):
    assert _msg(client, change, field) == expected


def test_a_unit_error_gives_its_examples_as_people_write_them(client):
    msg = _msg(client, lambda b: b["press"].update(filter_area="50 bar"), "press.filter_area")
    assert msg == "'bar' is not a unit of area; use, for example, \"120 m²\" or \"1300 ft²\"", msg


def test_numbers_in_messages_carry_no_rounding_noise(client):
    msg = _msg(client, lambda b: b["slurry"].update(solids_density="2.6000000000000001 kg/m^3"), "slurry.solids_density")
    assert "got 2.6 kg/m" in msg and "0000000" not in msg


@pytest.mark.parametrize("section,field,value", [
    ("slurry", "solids_concentration", "0.001 g/L"),  # the lower bound, 1e-3 kg/m^3, given in g/L
    ("press", "chamber_thickness", "500 mm"),          # the upper bound, 0.5 m
    ("press", "chamber_thickness", "1 mm"),            # the lower bound, 1e-3 m
])
def test_an_exact_bound_in_another_unit_is_accepted(client, section, field, value):
    body = copy.deepcopy(BASE_REQUEST)
    if field == "solids_concentration":
        body["slurry"].pop("solids_mass_fraction")
    body[section][field] = value
    assert client.post("/api/v1/cycle", json=body).status_code == 200


def test_a_reference_pressure_of_one_pound_per_square_foot_is_accepted(client):
    # alpha = alpha_0 dP^s is often tabulated with dP in lbf/ft^2, i.e. alpha_0 at 1 lbf/ft^2
    # (common practice, no source)
    body = copy.deepcopy(BASE_REQUEST)
    body["cake"].update(compressibility=0.5, reference_pressure="1 lbf/ft^2")
    assert client.post("/api/v1/cycle", json=body).status_code == 200


@pytest.mark.parametrize("change,field,words", [
    (lambda b: b["press"].update(plate_face_area=1.0, chambers=3.5), "press.chambers", "must be a whole number"),
    (lambda b: b.update(compare_thicknesses=["30 mm"] * 60), "compare_thicknesses", "give at most 50 entries"),
    (lambda b: b["cycle"].update(washing="sideways"), "cycle.washing", "must be one of"),
    (lambda b: b.update(slurry=[1, 2]), "slurry", "must be an object"),
])
def test_library_messages_are_put_in_the_tools_words(client, change, field, words):
    def apply(b):
        if field == "press.chambers":
            b["press"].pop("filter_area")
        change(b)

    msg = _msg(client, apply, field)
    assert msg.startswith(words) and "Input should" not in msg and "List should" not in msg


def test_an_empty_scenario_name_is_said_plainly(client):
    msg = _msg(client, lambda b: None, "name", "/api/v1/scenarios", lambda b: {"name": "", "inputs": b})
    assert msg == "must not be empty"


# ---- plausibility: calculated, and flagged --------------------------------------------------------

def _warnings(client, change):
    body = copy.deepcopy(BASE_REQUEST)
    change(body)
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 200, r.text
    return {w["field"]: w["message"] for w in r.json()["input_warnings"]}


def test_a_fraction_typed_with_percent_chosen_is_flagged_as_a_slip(client):
    w = _warnings(client, lambda b: b["slurry"].update(solids_mass_fraction="0.58 %"))
    assert "0.58 %" in w["slurry.solids_mass_fraction"] and "usual 1–60 %" in w["slurry.solids_mass_fraction"]
    assert "would be 58 %" in w["slurry.solids_mass_fraction"]


def test_a_pressure_a_hundred_times_too_high_is_flagged_in_the_unit_typed(client):
    w = _warnings(client, lambda b: b["feed"].update(pressure="1000 bar"))
    assert w["feed.pressure"].startswith("1000 bar is outside the usual 3–20 bar")
    # how far off it is (1000 / 20), not the power of ten that would bring it in (it said "a factor
    # of 100" of a value 50 times the top: a plant-engineer check)
    assert "It is 50 times too large for the usual range: check the unit." in w["feed.pressure"]


def test_an_unusual_value_that_is_no_slip_is_flagged_without_a_guess(client):
    w = _warnings(client, lambda b: b["slurry"].update(solids_density="600 kg/m^3"))
    # in the unit typed, written as the range beside it is (it read "600 kg/m^3 ... 1000–5000 kg/m³")
    assert "600 kg/m³ is outside the usual 1000–5000 kg/m³" in w["slurry.solids_density"]
    assert "factor" not in w["slurry.solids_density"] and "looks like" not in w["slurry.solids_density"]


def test_usual_inputs_and_every_demo_raise_no_flag(client):
    from tests.test_pages import DEMOS

    assert _warnings(client, lambda b: None) == {}
    for demo in DEMOS:
        assert client.post("/api/v1/cycle", json=demo.inputs).json()["input_warnings"] == [], demo.slug


def test_a_cloth_resistance_of_zero_is_not_flagged(client):
    assert "medium_resistance" not in _warnings(client, lambda b: b.update(medium_resistance=0))


def test_flags_show_on_the_results_pane(client):
    body = copy.deepcopy(BASE_REQUEST)
    body["feed"]["pressure"] = "1000 bar"
    html = client.post("/ui/results", json=body).json()["html"]
    assert "Feed pressure:" in html and "50 times too large" in html


def test_a_value_just_outside_the_usual_range_is_not_called_a_slip(client):
    w = _warnings(client, lambda b: b["feed"].update(pressure="35 bar"))
    assert w["feed.pressure"].startswith("35 bar is outside the usual 3–20 bar")
    assert "factor" not in w["feed.pressure"]  # 35 bar is unusual, not ten times too much


def test_a_dot_read_as_decimal_point_shows_as_a_factor_of_1000(client):
    # "19.000 cm^2" meant as 19 000 cm^2 by a reader of dot-grouped thousands: 19 cm^2 per face
    def change(b):
        b["press"] = {"plate_face_area": "19.000 cm^2", "chambers": 40, "chamber_thickness": "40 mm"}
    w = _warnings(client, change)
    assert w["press.plate_face_area"].startswith("19 cm² is outside the usual 500–60000 cm²")
    # 500 / 19 = 26 times below the range's low end
    assert "It is 26 times too small" in w["press.plate_face_area"] and "19 000" in w["press.plate_face_area"]


def test_a_bare_number_is_shown_with_its_si_unit(client):
    w = _warnings(client, lambda b: b["press"].update(fill_fraction=0.5))
    assert w["press.fill_fraction"].startswith("0.5 is outside the usual 0.8–1")


def test_a_solids_density_fixed_by_the_cake_must_be_one_solids_have(client):
    # saturated cake: porosity = (m - 1) rho_b / rho_l; rho_s = rho_b / (1 - porosity) (worked by hand:
    # 2900 kg/m^3 at 25 % moisture: m = 4/3, porosity = (1/3)(2900)/1000 = 0.9667, solids 2900/0.0333 = 87 000)
    body = copy.deepcopy(BASE_REQUEST)
    body["slurry"].pop("solids_density")
    body["slurry"]["liquid_density"] = "1000 kg/m^3"
    body["cake"] = {k: v for k, v in body["cake"].items() if k not in ("moisture", "porosity", "wet_to_dry_ratio")}
    body["cake"].update(dry_bulk_density="2900 kg/m^3", moisture="25 %")
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 422
    assert {d["field"] for d in r.json()["detail"]} == {"cake.dry_bulk_density", "cake.moisture"}
    assert "solids of 87000 kg/m³ (porosity 0.9667)" in r.text
    # 300 kg/m^3 at 8 % moisture: porosity 0.0261, solids of 308 kg/m^3, lighter than water: calculated, flagged
    body["cake"].update(dry_bulk_density="300 kg/m^3", moisture="8 %")
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 200, r.text
    flags = {w["field"]: w["message"] for w in r.json()["input_warnings"]}
    assert "solids of 308 kg/m³" in flags["cake.dry_bulk_density"]


def test_running_hours_take_a_unit(client):
    # hours a day: a bare number is hours, and "22 h" or "1320 min" say the same (1 h = 60 min)
    answers = []
    for hours in (22, "22 h", "1320 min"):
        body = copy.deepcopy(BASE_REQUEST)
        body["target"] = {"solids_throughput": "100 t/day", "hours_per_day": hours}
        r = client.post("/api/v1/cycle", json=body)
        assert r.status_code == 200, r.text
        answers.append(r.json()["target"]["hours_per_day"])
    assert answers == [22.0, 22.0, 22.0]


def test_a_bare_temperature_is_flagged_in_degrees_celsius(client):
    # a bare temperature is in °C in the API: 98 is 98 °C, above the usual 5–95 °C
    def hot(value):
        return lambda b: (b["slurry"].pop("viscosity", None), b["slurry"].update(temperature=value))
    w = _warnings(client, hot(98))
    assert w["slurry.temperature"].startswith("98 °C (a bare number is in °C) is outside the usual 5–95 °C")
    w = _warnings(client, hot("208.4 degF"))  # 98 °C
    assert w["slurry.temperature"].startswith("208.4 °F is outside the usual 41–203 °F")


def test_list_entries_are_flagged_each_at_its_index(client):
    def change(b):
        b["compare_thicknesses"] = ["30 mm", "200 mm"]
        b["feed"] = {"mode": "pressure_steps", "steps": [["1 bar", "10 min"], ["70 bar", "60 min"]]}
    w = _warnings(client, change)
    assert w["compare_thicknesses.1"].startswith("200 mm is outside the usual 10–100 mm")
    assert w["feed.steps.1.0"].startswith("70 bar is outside the usual 0.3–20 bar")
    assert "compare_thicknesses.0" not in w and "feed.steps.0.0" not in w


def test_a_bare_number_refused_as_si_says_the_unit_it_fits_in(client):
    # a client sending 7 for 7 bar got "got 7 Pa" and had to guess why (a plant-engineer check):
    # the refusal now says a bare number is SI and names the unit it would fit in
    msg = _msg(client, lambda b: b["feed"].update(pressure=7), "feed.pressure")
    assert msg.endswith('got 7 Pa (a number without a unit is in Pa: for 7 bar, send "7 bar")'), msg
    msg = _msg(client, lambda b: b["press"].update(chamber_thickness="25"), "press.chamber_thickness")
    assert 'for 25 mm, send "25 mm"' in msg, msg
    # no hint where no such unit fits, or where a unit was typed
    assert "without a unit" not in _msg(client, lambda b: b["feed"].update(pressure=1e12), "feed.pressure")
    assert "without a unit" not in _msg(client, lambda b: b["feed"].update(pressure="7 Pa"), "feed.pressure")


def test_an_exponent_refused_gets_no_percent_hint(client):
    # a compressibility of 1.5 was answered 'for 1.5 %, send "1.5 %"': an exponent is never a
    # percentage (a plant-engineer check); a mass fraction still gets the hint
    msg = _msg(client, lambda b: b["cake"].update(compressibility=1.5), "cake.compressibility")
    assert msg.endswith("must be at least 0 and below 1; got 1.5"), msg
    msg = _msg(client, lambda b: b["slurry"].update(solids_mass_fraction=58), "slurry.solids_mass_fraction")
    assert 'for 58 %, send "58 %"' in msg, msg


@pytest.mark.parametrize("where, field, value, hint", [
    (("slurry",), "solids_mass_fraction", 20, 'a number without a unit is a fraction: for 20 %, send "20 %"'),
    (("slurry",), "solids_density", 4, 'for 4 g/cm³, send "4 g/cm³"'),
    (("press",), "plate_face_area", 15000, 'for 15000 cm², send "15000 cm²"'),
])
def test_more_bare_numbers_refused_as_si_say_the_unit_they_fit_in(client, where, field, value, hint):
    # a second plant-engineer check: fractions, densities and areas had no hint
    def change(b):
        target = b
        for key in where:
            target = target.setdefault(key, {})
        target[field] = value
    msg = _msg(client, change, ".".join((*where, field)))
    assert hint in msg, msg


def test_a_bare_reference_pressure_is_flagged_with_the_unit_it_was_likely_meant_in(client):
    # "reference_pressure": 6 (meant as bar) was read as 6 Pa with no word, and moved every figure
    body = copy.deepcopy(BASE_REQUEST)
    body["cake"].update(compressibility=0.3, reference_pressure=6)
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 200, r.text
    flags = {w["field"]: w["message"] for w in r.json()["input_warnings"]}
    assert 'for 6 bar, send "6 bar"' in flags["cake.reference_pressure"], flags
    body["cake"]["reference_pressure"] = "6 bar"
    assert "cake.reference_pressure" not in {w["field"] for w in client.post("/api/v1/cycle", json=body).json()[
        "input_warnings"]}


def test_a_field_missing_from_an_optional_group_says_the_group_needs_it(client):
    # a blow time alone showed a bare "required" under fields marked optional (a second
    # plant-engineer check)
    body = copy.deepcopy(BASE_REQUEST)
    body["cycle"]["blow"] = {"time": "5 min"}
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 422
    assert {d["field"]: d["msg"] for d in r.json()["detail"]} == {
        "cycle.blow.curve": "required with an air blow", "cycle.blow.lab_thickness": "required with an air blow"}
    # a top-level field is plainly required
    assert _msg(client, lambda b: b.pop("medium_resistance"), "medium_resistance") == "required"


def test_a_bound_reads_the_same_in_every_message():
    # quantities.bound_text: digits below a million, a power of ten from a million on, judged
    # on the number as rounded (a review: 999999.5 and 10 / 1e-5 were written "1000000" where
    # 1e6 was "1e6"); the docstring's examples, run here (pytest collects no doctests there)
    from server.schemas.quantities import bound_text

    assert [bound_text(8640000.000000001, 4), bound_text(1e-3), bound_text(100000.0), bound_text(14503.7, 4)] == \
        ["8.64e6", "0.001", "100000", "14500"]
    assert {bound_text(999999.5), bound_text(10 / 1e-5, 4), bound_text(1e6, 4), bound_text(1e6)} == {"1e6"}
    assert [bound_text(-14503.7, 4), bound_text(123456.0, 2), bound_text(2.5e6)] == ["-14500", "120000", "2.5e6"]
