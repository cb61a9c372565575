"""POST /api/v1/cycle: the contract, units at the edge, and bad input."""

import copy
import json
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.conftest import BASE_REQUEST

RESULT_FIELDS = {"filtrate_volume", "filtration_time", "wash_time", "cycle_time",
                 "filtrate_throughput", "solids_throughput", "cake_thickness", "chamber_fill",
                 "limited_by"}
DERIVED_FIELDS = {"c", "cake_volume_ratio", "porosity", "wet_to_dry_ratio", "viscosity",
                  "resistance_at_feed"}


def post(client, body):
    return client.post("/api/v1/cycle", json=body)


def test_response_has_every_contract_field(client, base_request):
    base_request["compare_thicknesses"] = [0.03, 0.05]
    r = post(client, base_request)
    assert r.status_code == 200
    data = r.json()
    assert DERIVED_FIELDS <= set(data["derived"])
    for key in ("best", "unconstrained_optimum", "chambers_full"):
        assert RESULT_FIELDS <= set(data[key])
    assert [row["chamber_thickness"] for row in data["thickness_comparison"]] == [0.03, 0.05]
    assert RESULT_FIELDS <= set(data["thickness_comparison"][0]["best"])
    assert isinstance(data["warnings"], list)
    assert data["unconstrained_optimum"]["limited_by"] == "optimum"
    assert data["chambers_full"]["limited_by"] == "chambers_full"


def test_results_are_the_solvers_in_si(client, base_request):
    data = post(client, base_request).json()
    b = data["best"]
    assert b["cycle_time"] == pytest.approx(b["filtration_time"] + b["wash_time"] + b["downtime"])
    assert b["filtrate_throughput"] == pytest.approx(b["filtrate_volume"] / b["cycle_time"])
    assert b["solids_throughput"] == pytest.approx(data["derived"]["c"] * b["filtrate_throughput"])
    # cake thickness is per face: chambers full at half the chamber thickness
    full = data["chambers_full"]
    assert full["cake_thickness"] == pytest.approx(base_request["press"]["chamber_thickness"] / 2)
    assert full["chamber_fill"] == pytest.approx(1.0)


def test_unit_strings_give_the_same_answer_as_si_numbers(client, base_request):
    si = post(client, base_request).json()
    text = copy.deepcopy(base_request)
    text["slurry"].update(solids_mass_fraction="20 %", solids_density="2.6 g/cm^3", viscosity="1 cP")
    text["cake"]["resistance"] = "1e11 m/kg"
    text["medium_resistance"] = "5e10 1/m"
    text["press"].update(filter_area="50 m^2", chamber_thickness="40 mm")
    text["feed"]["pressure"] = "5 bar"
    text["cycle"]["downtime"] = "20 min"
    assert post(client, text).json()["best"] == pytest.approx(si["best"])


def test_plates_and_chambers_give_the_filter_area(client, base_request):
    base_request["press"] = {"plate_face_area": "1.25 m^2", "chambers": 20, "chamber_thickness": "40 mm"}
    data = post(client, base_request).json()
    assert data["derived"]["filter_area"] == pytest.approx(50.0)


def test_temperature_gives_water_viscosity_and_density(client, base_request):
    del base_request["slurry"]["viscosity"]
    base_request["slurry"]["temperature"] = 20
    d = post(client, base_request).json()["derived"]
    assert d["viscosity"] == pytest.approx(1.0016e-3, rel=1e-3)  # IAPWS 2008 at 20 degC
    assert d["liquid_density"] == pytest.approx(998.2, abs=0.1)


def test_default_liquid_density_is_998_without_temperature(client, base_request):
    assert post(client, base_request).json()["derived"]["liquid_density"] == 998.0


def test_compressible_cake_resistance_follows_the_feed_pressure(client, base_request):
    base_request["cake"].update(compressibility=0.5, reference_pressure="1 bar")
    d = post(client, base_request).json()["derived"]
    assert d["resistance_at_feed"] == pytest.approx(1e11 * 5**0.5)


def test_washing_lengthens_the_cycle(client, base_request):
    dry = post(client, base_request).json()["best"]
    base_request["cycle"].update(wash_ratio=1.0, washing="through")
    washed = post(client, base_request).json()["best"]
    assert washed["wash_time"] > 0 and dry["wash_time"] == 0
    assert washed["filtrate_throughput"] < dry["filtrate_throughput"]


def errors_of(response):
    assert response.status_code == 422, response.text
    return {e["field"]: e["msg"] for e in response.json()["detail"]}


@pytest.mark.parametrize(
    "change,field,fragment",
    [
        (lambda b: b["slurry"].update(solids_concentration=100), "slurry", "only one of"),
        (lambda b: b["slurry"].pop("solids_mass_fraction"), "slurry", "give one of"),
        (lambda b: b["slurry"].update(temperature=20), "slurry", "only one of"),
        (lambda b: b["slurry"].update(solids_mass_fraction=0.7), "slurry.solids_mass_fraction", "no filtrate"),
        (lambda b: b["cake"].update(porosity=0.4), "cake", "only one of"),
        (lambda b: b["cake"].pop("wet_to_dry_ratio") and b["cake"].update(porosity=1.0), "cake.porosity", "below 1"),
        (lambda b: b["cake"].update(compressibility=1.0, reference_pressure=1e5), "cake.compressibility", "below 1"),
        (lambda b: b["cake"].update(compressibility=0.3), "cake", "reference_pressure"),
        (lambda b: b["cake"].update(resistance=0), "cake.resistance", "at least"),
        (lambda b: b["cake"].update(resistance=-1e11), "cake.resistance", "at least"),
        (lambda b: b.update(medium_resistance=-1), "medium_resistance", "at least 0"),
        (lambda b: b["press"].update(filter_area=0), "press.filter_area", "at least 0.001"),
        (lambda b: b["press"].update(chamber_thickness=-0.01), "press.chamber_thickness", "at least 0.001 m"),
        (lambda b: b["press"].update(chambers=10), "press", "not both"),
        (lambda b: b["feed"].update(pressure=0), "feed.pressure", "at least 100 Pa"),
        (lambda b: b["feed"].update(pressure="5 kg"), "feed.pressure", "not a unit of pressure"),
        (lambda b: b["feed"].update(pressure="5 blorps"), "feed.pressure", "unknown unit"),
        (lambda b: b["slurry"].update(viscosity=0), "slurry.viscosity", "at least"),
        (lambda b: b["cycle"].update(downtime=0), "cycle.downtime", "at least 1 s"),
        (lambda b: b["cycle"].update(washing="sideways"), "cycle.washing", "through"),
        (lambda b: b["cycle"].update(presure=1), "cycle.presure", "unknown field"),
        (lambda b: b.update(compare_thicknesses=[0.03, -1]), "compare_thicknesses.1", "at least"),
        (lambda b: b.pop("medium_resistance"), "medium_resistance", "required"),
    ],
)
def test_bad_input_is_a_422_naming_the_field(client, base_request, change, field, fragment):
    change(base_request)
    errs = errors_of(post(client, base_request))
    assert field in errs, errs
    assert fragment in errs[field]


def test_zero_medium_resistance_is_allowed(client, base_request):
    base_request["medium_resistance"] = 0
    assert post(client, base_request).status_code == 200


def test_range_messages_name_the_allowed_range_with_units(client, base_request):
    base_request["feed"]["pressure"] = "-3 bar"
    msg = errors_of(post(client, base_request))["feed.pressure"]
    assert "at least 100 Pa" in msg and "-300000 Pa" in msg


def test_malformed_json_is_a_422_not_a_500(client):
    r = client.post("/api/v1/cycle", content=b"{not json", headers={"content-type": "application/json"})
    assert r.status_code == 422


def _all_finite(obj):
    if isinstance(obj, float):
        return math.isfinite(obj)
    if isinstance(obj, dict):
        return all(_all_finite(v) for v in obj.values())
    if isinstance(obj, list):
        return all(_all_finite(v) for v in obj)
    return True


def log_uniform(lo, hi):
    return st.floats(min_value=math.log(lo), max_value=math.log(hi)).map(math.exp)


valid_bodies = st.fixed_dictionaries({
    "slurry": st.fixed_dictionaries({
        "solids_mass_fraction": st.floats(0.001, 0.3),
        "solids_density": st.floats(1000, 8000),
        "temperature": st.floats(1, 99),
    }),
    "cake": st.fixed_dictionaries({
        "resistance": log_uniform(1e6, 1e16),
        "reference_pressure": log_uniform(1e3, 1e7),
        "compressibility": st.floats(0, 0.99),
        "porosity": st.floats(0.05, 0.95),
    }),
    "medium_resistance": st.one_of(st.just(0.0), log_uniform(1e6, 1e14)),
    "press": st.fixed_dictionaries({
        "filter_area": log_uniform(0.01, 1e4), "chamber_thickness": log_uniform(1e-3, 0.5),
        "fill_fraction": st.floats(0.05, 1.0),
    }),
    "feed": st.one_of(
        st.fixed_dictionaries({"mode": st.just("constant_pressure"), "pressure": log_uniform(1e3, 1e8)}),
        st.fixed_dictionaries({"mode": st.just("constant_rate"), "flow": log_uniform(1e-6, 10),
                               "max_pressure": log_uniform(1e3, 1e8)}),
        st.lists(st.tuples(log_uniform(1e-6, 10), log_uniform(1e3, 1e8)), min_size=2, max_size=8, unique_by=lambda p: p[0])
        .map(lambda pts: {"mode": "pump_curve", "points": [
            [q, p] for q, p in zip(sorted(q for q, _ in pts), sorted((p for _, p in pts), reverse=True))]}),
        st.lists(st.tuples(log_uniform(1e3, 1e8), log_uniform(1, 1e5)), min_size=1, max_size=5)
        .map(lambda steps: {"mode": "pressure_steps", "steps": [list(x) for x in steps]}),
    ),
    "cycle": st.fixed_dictionaries({
        "downtime": log_uniform(1, 1e6), "wash_ratio": st.floats(0, 100),
        "washing": st.sampled_from(["through", "simple"]),
        "end": st.one_of(
            st.just({"criterion": "best"}), st.just({"criterion": "chambers_full"}),
            st.builds(lambda t: {"criterion": "time", "time": t}, log_uniform(1, 1e6)),
            st.builds(lambda q: {"criterion": "flow", "flow": q}, log_uniform(1e-8, 10)),
            st.builds(lambda q: {"criterion": "flow", "flow_per_area": q}, log_uniform(1e-9, 1)),
            st.builds(lambda f: {"criterion": "flow", "flow_fraction": f}, st.floats(0.001, 0.999)),
            st.builds(lambda p: {"criterion": "pressure", "pressure": p}, log_uniform(1e2, 1e8)),
        ),
    }),
    "compare_thicknesses": st.lists(log_uniform(1e-3, 0.5), max_size=3),
})


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(body=valid_bodies)
def test_random_valid_inputs_give_finite_answers_or_a_plain_422(client, body):
    r = post(client, body)
    assert r.status_code in (200, 422), r.text
    if r.status_code == 200:
        data = r.json()
        assert _all_finite(data)
        assert data["best"]["filtrate_throughput"] > 0
    else:
        assert r.json()["detail"][0]["msg"]


junk = st.one_of(
    st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=20), st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=5), st.integers(), max_size=2),
)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(section=st.sampled_from(["slurry", "cake", "press", "feed", "cycle"]), key=st.text(max_size=25), value=junk,
       pick=st.integers(0, 10))
def test_random_invalid_inputs_never_give_a_500_or_nan(client, section, key, value, pick):
    body = copy.deepcopy(BASE_REQUEST)
    keys = list(body[section])
    name = keys[pick % len(keys)] if pick < 6 else key
    body[section][name] = value
    r = client.post("/api/v1/cycle", content=json.dumps(body, allow_nan=True),
                    headers={"content-type": "application/json"})
    assert r.status_code in (200, 422), r.text
    json.loads(r.text, parse_constant=_refuse_constant)  # no NaN or Infinity in the body


def _refuse_constant(name):
    raise AssertionError(f"response contains {name}")


def test_oversized_request_body_is_a_413(client):
    r = client.post("/api/v1/cycle", content=b"{" + b" " * 3_000_000 + b"}", headers={"content-type": "application/json"})
    assert r.status_code == 413
    assert "larger than" in r.json()["detail"]


def _sampled_throughput_spread(c, rho, n=40000):
    """Standard deviation of the best filtrate throughput by sampling (independent of the
    solver): constant pressure 5 bar, no wash, optimum within the chambers, closed form
    V* = sqrt(2 t_d / K_p), t_f = t_d + B V* (McCabe, Smith & Harriott, "Filtration")."""
    rng = np.random.default_rng(2026)
    z1, z2 = rng.standard_normal((2, n))
    ln_alpha = np.log(1e11) + 0.1 * z1
    R_m = 5e10 + 5e9 * (rho * z1 + np.sqrt(1 - rho**2) * z2)
    K_p = 1e-3 * np.exp(ln_alpha) * c / (50.0**2 * 5e5)
    B = 1e-3 * R_m / (50.0 * 5e5)
    V = np.sqrt(2 * 1200.0 / K_p)
    return float(np.std(V / (2 * 1200.0 + B * V)))


@pytest.mark.parametrize("rho", [-0.9, 0.0, 0.9])
def test_standard_errors_with_their_correlation_give_the_sampled_spread(client, base_request, rho):
    assert post(client, base_request).json()["uncertainty"] is None
    base_request["cake"]["resistance_stderr"] = "1e10 m/kg"  # 10 % of alpha
    base_request["medium_resistance_stderr"] = "5e9 1/m"
    base_request["resistance_medium_correlation"] = rho
    base_request["press"]["chamber_thickness"] = 0.3  # optimum-limited
    data = post(client, base_request).json()
    lo, hi = data["uncertainty"]["filtrate_throughput"]
    assert lo < data["best"]["filtrate_throughput"] < hi
    assert (hi - lo) / 2 == pytest.approx(_sampled_throughput_spread(data["derived"]["c"], rho), rel=0.05)
    assert ("correlation" in data["uncertainty"]["basis"]) == (rho != 0)


def test_a_standard_error_larger_than_the_value_keeps_the_range_positive(client, base_request):
    base_request["cake"]["resistance_stderr"] = "2e11 m/kg"  # alpha varies on a log scale: stays positive
    data = post(client, base_request).json()
    assert all(v > 0 for key in ("filtrate_throughput", "filtration_time") for v in data["uncertainty"][key])


def test_compressibility_error_widens_the_range_away_from_the_reference_pressure(client, base_request):
    # total basis: alpha is exactly alpha_ref at the reference pressure (on the cake basis the
    # cake sees a little less than the feed pressure, so s moves it a little)
    base_request["cake"].update(compressibility=0.5, reference_pressure="5 bar", resistance_stderr="5e9 m/kg",
                                pressure_basis="total")
    base_request["press"]["chamber_thickness"] = 0.3
    at_ref = post(client, base_request).json()["uncertainty"]["filtration_time"]
    base_request["cake"]["compressibility_stderr"] = 0.05
    still = post(client, base_request).json()["uncertainty"]["filtration_time"]
    assert still == pytest.approx(at_ref, rel=1e-6)  # at the reference pressure s does not move alpha
    base_request["feed"]["pressure"] = "10 bar"
    away = post(client, base_request).json()
    del base_request["cake"]["compressibility_stderr"]
    without = post(client, base_request).json()
    width = lambda d: d["uncertainty"]["filtration_time"][1] - d["uncertainty"]["filtration_time"][0]  # noqa: E731
    assert width(away) > 1.2 * width(without)


def test_a_press_outside_the_tested_pressures_is_warned_in_the_unit_typed(client, base_request):
    base_request["cake"].update(compressibility=0.4, reference_pressure="3 bar",
                                tested_pressure_range=["1 bar", "5 bar"])
    base_request["feed"]["pressure"] = "100 psi"
    warnings = post(client, base_request).json()["warnings"]
    assert any("100 psi" in w and "14.5 to 72.52 psi" in w for w in warnings), warnings
    base_request["feed"]["pressure"] = "4 bar"
    assert not any("lab tests' pressures" in w for w in post(client, base_request).json()["warnings"])


def test_production_target_is_checked_and_presses_counted(client, base_request):
    best = post(client, base_request).json()["best"]
    per_day = best["solids_throughput"] * 86400 / 1000  # t/day at 24 h
    base_request["target"] = {"solids_throughput": f"{2.5 * per_day * 20 / 24} t/day", "hours_per_day": 20}
    t = post(client, base_request).json()["target"]
    assert t["quantity"] == "solids_throughput" and not t["meets"]
    assert t["ratio"] == pytest.approx(0.4)
    assert t["presses_needed"] == 3
    base_request["target"] = {"filtrate_throughput": f"{0.5 * best['filtrate_throughput'] * 3600} m^3/h"}
    t = post(client, base_request).json()["target"]
    assert t["meets"] and t["presses_needed"] == 1 and t["ratio"] == pytest.approx(2.0)


def test_a_target_needs_exactly_one_quantity(client, base_request):
    base_request["target"] = {"hours_per_day": 20}
    assert "give one of" in errors_of(post(client, base_request))["target"]
    base_request["target"] = {"solids_throughput": "10 t/day", "hours_per_day": 30}
    assert "at most 24" in errors_of(post(client, base_request))["target.hours_per_day"]


def test_wash_ratio_by_cake_pore_volumes(client, base_request):
    base_request["cycle"].update(wash_ratio=2.0, wash_basis="cake_pores")
    data = post(client, base_request).json()
    d, b = data["derived"], data["best"]
    assert b["wash_volume"] == pytest.approx(2.0 * d["porosity"] * d["cake_volume_ratio"] * b["filtrate_volume"])
    base_request["cycle"]["wash_basis"] = "bed volumes"
    assert "cycle.wash_basis" in errors_of(post(client, base_request))


def test_an_end_criterion_the_chambers_reach_first_is_said(client):
    # a flow end point the filtrate never falls to before the chambers fill was relabelled
    # "chambers full" without a word (a second plant-engineer check)
    import json as _json

    from server.settings import PROJECT_ROOT

    body = _json.loads((PROJECT_ROOT / "demo_cases" / "kaolin_pump_fed.json").read_text())["inputs"]
    r = client.post("/api/v1/cycle", json=body).json()
    assert r["at_end"]["end_reason"] == "flow" and not any("fill first" in w for w in r["warnings"])
    body["cycle"]["end"] = {"criterion": "flow", "flow_per_area": "5 L/(m^2*h)"}
    r = client.post("/api/v1/cycle", json=body).json()
    assert r["at_end"]["end_reason"] == "chambers_full"
    said = [w for w in r["warnings"] if "fill first" in w]
    q = r["at_end"]["final_rate"]
    assert said == [f"Filtration would end when the filtrate flow falls to 5 L/(m²·h) of filter area, but the "
                    f"chambers fill first, with the filtrate still flowing at {q * 3600:.4g} m³/h "
                    f"({q / r['derived']['filter_area'] * 3.6e6:.4g} L/(m²·h)): the cycle at your end criterion is "
                    "the chambers-full cycle."], said
    body["cycle"]["end"] = {"criterion": "time", "time": "10 h"}
    r = client.post("/api/v1/cycle", json=body).json()
    assert any(w.startswith("Filtration would end after 600 min of filtration, but the chambers fill first")
               for w in r["warnings"])
