"""POST /api/v1/plan against hand calculations, /api/v1/cycle calls and Monte Carlo properties."""

import copy
import math

import numpy as np
import pytest

from tests.conftest import BASE_REQUEST

PLATES = {"plate_face_area": 1.0, "chambers": 25, "chamber_thickness": 0.04}


def plan_body(**kw):
    body = {"inputs": copy.deepcopy(BASE_REQUEST), "target": {"dry_solids_per_day": "100 t/day"}, "samples": 0}
    body.update(kw)
    return body


def post_plan(client, body, status=200):
    r = client.post("/api/v1/plan", json=body)
    assert r.status_code == status, r.text
    return r.json()


def cycle(client, inputs):
    r = client.post("/api/v1/cycle", json=inputs)
    assert r.status_code == 200, r.text
    return r.json()


def test_presses_needed_follow_a_hand_calculation(client):
    target = {"dry_solids_per_day": "150 t/day", "hours_per_day": 20, "days_per_week": 5,
              "availability": "90 %", "margin": "15 %"}
    got = post_plan(client, plan_body(target=target, spares=1))
    Q = cycle(client, BASE_REQUEST)["best"]["solids_throughput"]  # kg/s of one press while cycling
    # step by step (derived here):
    daily_dry_solids = 150e3  # kg a calendar day
    per_working_day = daily_dry_solids * 7 / 5  # five working days carry the week
    cycling_seconds = 20 * 3600 * 0.90  # hours run x availability
    required = per_working_day / cycling_seconds * 1.15  # kg/s with the margin
    cycles_per_day = cycling_seconds / cycle(client, BASE_REQUEST)["best"]["cycle_time"]
    per_press_per_day = cycles_per_day * cycle(client, BASE_REQUEST)["best"]["dry_cake_mass"]
    presses = math.ceil(per_working_day * 1.15 / per_press_per_day)
    assert got["required"] == pytest.approx(required, rel=1e-12)
    assert got["best_throughput"] == pytest.approx(Q, rel=1e-12)
    assert got["presses_needed"] == presses
    assert got["presses_with_spare"] == presses + 1
    assert got["utilisation"] == pytest.approx(required / (presses * Q), rel=1e-12)
    assert got["utilisation"] <= 1.0 and (presses == 1 or required > (presses - 1) * Q)


def test_presses_needed_rise_with_the_target(client):
    needed = [post_plan(client, plan_body(target={"dry_solids_per_day": f"{t} t/day"}))["presses_needed"]
              for t in (20, 60, 100, 200, 400, 800)]
    assert needed == sorted(needed) and needed[-1] > needed[0]


def test_slurry_and_filtrate_targets_count_their_own_volume(client):
    base = cycle(client, BASE_REQUEST)
    d = base["derived"]
    x, rho_s, rho_l = d["solids_mass_fraction"], d["solids_density"], d["liquid_density"]
    c_s = x / (x / rho_s + (1 - x) / rho_l)  # kg of dry solids per m^3 of slurry
    slurry = post_plan(client, plan_body(target={"slurry_per_day": "400 m^3/day"}))
    assert slurry["best_throughput"] == pytest.approx(base["best"]["solids_throughput"] / c_s, rel=1e-12)
    assert slurry["required"] == pytest.approx(400 / 86400, rel=1e-12)
    filtrate = post_plan(client, plan_body(target={"filtrate_per_day": "300 m^3/day"}))
    assert filtrate["best_throughput"] == pytest.approx(base["best"]["filtrate_throughput"], rel=1e-12)


@pytest.mark.parametrize("length", ["2 h", "8 h", "12 h"])
def test_whole_cycles_never_exceed_the_shift(client, length):
    got = post_plan(client, plan_body(shift={"length": length}))
    s = got["schedule"]
    assert s["cycles_per_shift"] * s["cycle_time"] <= s["shift_length"] * (1 + 1e-9)
    assert 0.0 <= s["cost"] < 1.0
    assert got["throughput"] == pytest.approx(got["best_throughput"] * (1 - s["cost"]), rel=1e-9)


def test_chambers_needed_is_the_smallest_count_that_meets(client):
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["press"] = dict(PLATES)
    inputs["cycle"] = {"downtime_parts": {"fixed": 600, "per_chamber": 15}}
    got = post_plan(client, plan_body(inputs=inputs, target={"dry_solids_per_day": "60 t/day"}))
    n = got["chambers_needed"]
    assert n is not None

    def one_press(chambers):
        variant = copy.deepcopy(inputs)
        variant["press"]["chambers"] = chambers
        return cycle(client, variant)["best"]["solids_throughput"]

    assert one_press(n) >= got["required"] > one_press(n - 1)
    # the downtime grew with the chambers: 600 s + 15 s each
    variant = copy.deepcopy(inputs)
    variant["press"]["chambers"] = n
    assert cycle(client, variant)["best"]["downtime"] == pytest.approx(600 + 15 * n)


def test_chambers_needed_is_null_without_plates_or_beyond_a_practical_press(client):
    assert post_plan(client, plan_body())["chambers_needed"] is None
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["press"] = dict(PLATES)
    inputs["cycle"] = {"downtime_parts": {"fixed": 600, "per_chamber": 60}}
    huge = post_plan(client, plan_body(inputs=inputs, target={"dry_solids_per_day": "5000 t/day"}))
    assert huge["chambers_needed"] is None


def test_each_season_equals_a_cycle_call_at_its_temperature(client):
    got = post_plan(client, plan_body(temperatures=[8, "25 degC", "95 degF"]))
    for season, t_c in zip(got["seasons"], (8.0, 25.0, 35.0), strict=True):
        inputs = copy.deepcopy(BASE_REQUEST)
        inputs["slurry"].pop("viscosity")
        inputs["slurry"]["temperature"] = t_c
        best = cycle(client, inputs)["best"]
        assert season["temperature"] == pytest.approx(t_c + 273.15)
        assert season["throughput"] == pytest.approx(best["solids_throughput"], rel=1e-12)
    assert got["seasons"][0]["throughput"] < got["seasons"][2]["throughput"]  # warmer filtrate runs thinner


def test_cloth_wash_interval_agrees_with_brute_force_and_the_classic_formula(client):
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cycle"] = {"downtime_parts": {"fixed": 1200, "cloth_wash": {"time": "2 h", "every_cycles": "best"}}}
    inputs["cloth"] = {"resistance_growth_per_cycle": 2e9}
    got = post_plan(client, plan_body(inputs=inputs))
    cloth = got["cloth"]
    rates = np.array(cloth["average_throughput"])
    assert int(np.argmax(rates)) + 1 == cloth["best_interval"] == cloth["interval_used"]
    assert cloth["best_interval"] in (math.floor(cloth["classic_interval"]), math.ceil(cloth["classic_interval"]))
    # the cycle request shares the wash over that interval
    res = cycle(client, inputs)
    assert res["derived"]["cloth_wash_every_cycles"] == cloth["best_interval"]
    assert res["best"]["downtime"] == pytest.approx(1200 + 7200 / cloth["best_interval"])


def test_zero_uncertainty_collapses_to_the_deterministic_answer(client):
    got = post_plan(client, plan_body(samples=500))
    u = got["uncertainty"]
    for p in ("p10", "p50", "p90"):
        assert u["throughput"][p] == pytest.approx(got["best_throughput"], rel=1e-12)
        assert u["presses_needed"][p] == got["presses_needed"]
    assert u["probability_target_met"] == 1.0
    assert "No input is uncertain" in got["sensitivity"]["measure_next"]


def test_the_same_seed_gives_the_same_answer(client):
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cake"]["resistance_stderr"] = 2e10
    a = post_plan(client, plan_body(inputs=inputs, samples=2000, seed=5))
    b = post_plan(client, plan_body(inputs=inputs, samples=2000, seed=5))
    c = post_plan(client, plan_body(inputs=inputs, samples=2000, seed=6))
    assert a["uncertainty"] == b["uncertainty"]
    assert a["uncertainty"]["throughput"] != c["uncertainty"]["throughput"]


def test_small_symmetric_ranges_put_p50_on_the_deterministic_answer(client):
    got = post_plan(client, plan_body(samples=4000, ranges={
        "slurry.solids_mass_fraction": ["19.9 %", "20.1 %"], "feed.pressure": ["4.99 bar", "5.01 bar"]}))
    assert got["uncertainty"]["throughput"]["p50"] == pytest.approx(got["best_throughput"], rel=2e-4)
    p = got["uncertainty"]["throughput"]
    assert p["p10"] < p["p50"] < p["p90"]


def test_lab_fit_spread_with_correlation_ranks_the_inputs(client):
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cake"].update(resistance_stderr=2e10, compressibility=0.3, reference_pressure="5 bar",
                          compressibility_stderr=0.02)
    inputs.update(medium_resistance_stderr=5e9, resistance_medium_correlation=-0.9)
    got = post_plan(client, plan_body(inputs=inputs, samples=10000, target={"dry_solids_per_day": "300 t/day"}))
    u, sens = got["uncertainty"], got["sensitivity"]
    assert u["throughput"]["p10"] < u["throughput"]["p50"] < u["throughput"]["p90"]
    assert 0.0 <= u["probability_target_met"] <= u["probability_target_met_with_spare"] <= 1.0
    assert sum(u["histogram_counts"]) == 10000
    tornado = sens["tornado"]
    assert tornado[0]["input"] == "cake.resistance"  # a 20 % standard error outweighs the others
    swings = [abs(r["throughput_high"] - r["throughput_low"]) for r in tornado]
    assert swings == sorted(swings, reverse=True)
    assert sens["measure_next"].startswith("Repeating the lab test at 5 bar would narrow the answer most")


def test_energy_at_constant_pressure_is_pressure_times_filtrate(client):
    got = post_plan(client, plan_body(target={"dry_solids_per_day": "100 t/day", "pump_efficiency": "60 %"}))
    best = cycle(client, BASE_REQUEST)["best"]
    by_hand = 5e5 * best["filtrate_volume"] / 0.6  # Pa x m^3 / efficiency, no wash. Derived here.
    assert got["energy"]["per_cycle"] == pytest.approx(by_hand, rel=1e-9)
    assert got["energy"]["per_dry_solids"] == pytest.approx(by_hand / best["dry_cake_mass"], rel=1e-9)


@pytest.mark.parametrize("change, field, words", [
    ({"ranges": {"cake.colour": [1, 2]}}, ["body", "ranges", "cake.colour"], "allowed"),
    ({"ranges": {"feed.pressure": ["6 bar", "4 bar"]}}, ["body", "ranges", "feed.pressure"], "low end"),
    ({"ranges": {"slurry.solids_mass_fraction": ["-5 %", "20 %"]}}, ["body", "ranges", "slurry.solids_mass_fraction", 0],
     "at least"),
    ({"ranges": {"cake.moisture": ["20 %", "30 %"]}}, ["body", "ranges", "cake.moisture", 0], "only one of"),
    ({"target": {}}, ["body", "target"], "give one of"),
    ({"target": {"dry_solids_per_day": "100 t/day", "availability": "120 %"}}, ["body", "target", "availability"],
     "at most"),
    ({"shift": {"length": "5 min"}}, ["body", "shift", "length"], "at least"),
    ({"samples": 10 ** 6}, ["body", "samples"], "100000"),
])
def test_bad_plan_input_is_a_clear_422(client, change, field, words):
    body = plan_body()
    body.update(change)
    r = client.post("/api/v1/plan", json=body)
    assert r.status_code == 422, r.text
    detail = r.json()["detail"]
    hit = [d for d in detail if d["loc"] == field]
    assert hit, detail
    assert words in hit[0]["msg"]


@pytest.mark.parametrize("cycle_in, extra, field", [
    ({"downtime_parts": {"fixed": 600, "per_chamber": 20}}, {}, ["body", "inputs", "cycle", "downtime_parts",
                                                                  "per_chamber"]),
    ({"downtime_parts": {"fixed": 600, "cloth_wash": {"time": 3600, "every_cycles": "best"}}}, {},
     ["body", "inputs", "cycle", "downtime_parts", "cloth_wash", "every_cycles"]),
    ({"downtime": 600}, {"resistance_medium_correlation": 1.5}, ["body", "inputs", "resistance_medium_correlation"]),
    ({"downtime": 600, "downtime_parts": {"fixed": 600}}, {}, ["body", "inputs", "cycle"]),
])
def test_downtime_parts_and_lab_fit_fields_are_checked(client, cycle_in, extra, field):
    body = plan_body()
    body["inputs"]["cycle"] = cycle_in
    body["inputs"].update(extra)
    r = client.post("/api/v1/plan", json=body)
    assert r.status_code == 422, r.text
    assert any(d["loc"] == field for d in r.json()["detail"]), r.json()


def test_the_plans_samples_of_the_lab_fit_carry_the_requested_correlation():
    from server.plan import Samples
    from server.schemas.plan import PlanRequest
    from server.solve import build_system

    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cake"]["resistance_stderr"] = 1e10
    inputs.update(medium_resistance_stderr=5e9, resistance_medium_correlation=-0.92)
    req = PlanRequest.model_validate(plan_body(inputs=inputs, samples=20000))
    drawn = Samples(req, build_system(req.inputs), 20000)
    ln_a, ln_r = np.log(drawn.values["cake.resistance"]), np.log(drawn.values["medium_resistance"])
    assert np.corrcoef(ln_a, ln_r)[0, 1] == pytest.approx(-0.92, abs=0.01)
    # log-normal about the fitted values, with the standard errors as relative spreads
    assert np.median(drawn.values["cake.resistance"]) == pytest.approx(1e11, rel=0.01)
    assert np.std(ln_a) == pytest.approx(0.1, rel=0.03) and np.std(ln_r) == pytest.approx(0.1, rel=0.03)


@pytest.mark.parametrize("stderr", [1e8, 1e9])
def test_small_lab_fit_errors_put_p50_on_the_deterministic_answer(client, stderr):
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cake"]["resistance_stderr"] = stderr
    got = post_plan(client, plan_body(inputs=inputs, samples=4001))
    assert got["uncertainty"]["throughput"]["p50"] == pytest.approx(got["best_throughput"], rel=stderr / 1e11)


def test_a_pump_fed_scenario_samples_each_cycle_on_its_own_and_says_so(client):
    import json
    from pathlib import Path

    demo = json.loads((Path(__file__).resolve().parents[1] / "demo_cases" / "kaolin_pump_fed.json").read_text())
    inputs = demo.get("inputs", demo)
    inputs["cake"]["resistance_stderr"] = "3e10 m/kg"
    got = post_plan(client, plan_body(inputs=inputs, samples=10000, target={"dry_solids_per_day": "200 t/day"}))
    u = got["uncertainty"]
    assert u["samples"] == 400 and "400" in u["notes"][0]
    assert u["throughput"]["p10"] < u["throughput"]["p50"] < u["throughput"]["p90"]
    # the tornado's ends are whole cycle solves: one of them against /api/v1/cycle
    row = got["sensitivity"]["tornado"][0]
    variant = copy.deepcopy(inputs)
    variant["cake"]["resistance"] = row["high"]
    variant["cake"].pop("resistance_stderr")
    # the cycle call tabulates the pump-fed curve further (its thickness comparison): within 1e-6
    assert row["throughput_high"] == pytest.approx(cycle(client, variant)["best"]["solids_throughput"], rel=1e-6)


def test_a_scenario_file_with_a_plan_imports_with_it(client):
    body = {"name": "imported", "inputs": BASE_REQUEST, "plan": {"target": {"dry_solids_per_day": "80 t/day"}}}
    r = client.post("/api/v1/scenarios/import", json=body)
    assert r.status_code == 201, r.text
    assert client.get(f"/api/v1/scenarios/{r.json()['id']}").json()["plan"] == body["plan"]


def test_a_shift_shorter_than_the_shortest_cycle_fits_none(client):
    # a 30-min shift with a 3-min filling, a squeeze and the downtime was said to hold "1 cycle of
    # 33.0 min" (a second plant-engineer check): the shortest cycle (no filtrate) is longer
    inputs = copy.deepcopy(BASE_REQUEST)
    inputs["cycle"].update(downtime="20 min", fill_time="12 min")
    r = client.post("/api/v1/plan", json=plan_body(inputs=inputs, shift={"length": "30 min"}))
    assert r.status_code == 422, r.text
    detail = r.json()["detail"]
    assert detail[0]["field"] == "shift.length" and detail[0]["msg"] == (
        "no cycle fits a shift of 30 min: the shortest cycle this press runs takes about 32 min (its filling, the "
        "stages after filtration and the downtime with it)"), detail
    # a shift that holds the shortest cycle: whole cycles, none longer than the shift
    got = post_plan(client, plan_body(inputs=inputs, shift={"length": "40 min"}))
    s = got["schedule"]
    assert s["cycles_per_shift"] >= 1 and s["cycles_per_shift"] * s["cycle_time"] <= s["shift_length"] * (1 + 1e-9)


def test_a_refusal_at_a_season_temperature_is_that_temperatures(client, monkeypatch):
    # a season's temperature that the scenario cannot be solved at was refused at the scenario's
    # own slurry temperature, which solved (a review): it is the plan's temperatures[i]
    import server.plan as plan
    from server.errors import InputError

    build = plan._build

    def refusing(inputs):
        if inputs.slurry.temperature == pytest.approx(273.15 + 50):
            raise InputError([(("body", "inputs", "slurry", "temperature"), "the solids would dissolve")])
        return build(inputs)

    monkeypatch.setattr(plan, "_build", refusing)
    detail = post_plan(client, plan_body(temperatures=[8, 50, 30]), status=422)["detail"]
    assert [(d["field"], d["msg"]) for d in detail] == [
        ("temperatures.1", "at this slurry temperature: the solids would dissolve")]
