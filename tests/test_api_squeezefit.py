"""POST /api/v1/squeeze-fit (and its page twin /ui/squeeze-fit): a lab squeeze test in, C_e,
creep and the squeezed cake out; bad input a 422 naming the field, never a 500."""

import json
from pathlib import Path
from urllib.parse import parse_qs, urlparse

import numpy as np
import pytest

from server.solver.expression import Squeeze

DATA = Path(__file__).resolve().parent / "data"
DEMO_CSV = (DATA / "squeeze_demo.csv").read_text()
# the invented demo test (tests/data/README.md): 58.0 g of 2650 kg/m^3 solids on 50 cm^2
DEMO = {"name": "demo piston test", "pressure": "6 bar", "dry_solids_mass": "58.0 g",
        "solids_density": "2650 kg/m^3", "area": "50 cm^2", "csv": DEMO_CSV}
OMEGA = 0.058 / (2650 * 0.005)  # m of solids per unit area
TIMES = [0, 5, 10, 20, 30, 45, 60, 90, 120, 180, 240, 300, 420, 600, 900, 1200, 1800]


def model_thickness(t, Ce=1.6e-7, B=0.15, eta=1.5e-3, L0=0.0102, L_inf=0.0071):
    return L0 - (L0 - L_inf) * Squeeze(6e5, Ce, 1.0, creep_fraction=B, creep_rate=eta).ratio(np.asarray(t, float), OMEGA)


def post(client, body):
    return client.post("/api/v1/squeeze-fit", json=body)


def errors_of(r):
    assert r.status_code == 422, r.text
    return {e["field"]: e["msg"] for e in r.json()["detail"]}


def test_the_demo_test_gives_the_squeeze_it_was_made_from(client):
    # the demo readings were made from C_e = 1.6e-7 m^2/s, B = 0.15, eta = 1.5e-3 1/s and
    # 7.10 mm at equilibrium, with 0.008 mm of scatter (tests/data/README.md)
    r = post(client, DEMO)
    assert r.status_code == 200, r.text
    d = r.json()
    assert d["measured"] == "thickness"
    assert d["consolidation_coefficient"] == pytest.approx(1.6e-7, abs=4 * d["consolidation_coefficient_stderr"])
    assert d["creep_fraction"] == pytest.approx(0.15, abs=4 * d["creep_fraction_stderr"])
    assert d["creep_rate"] == pytest.approx(1.5e-3, abs=4 * d["creep_rate_stderr"])
    assert d["final_thickness"] == pytest.approx(0.0071, abs=4 * d["final_thickness_stderr"])
    assert d["final_porosity"] == pytest.approx(1 - OMEGA / 0.0071, abs=4 * d["final_porosity_stderr"])
    assert d["solids_thickness"] == pytest.approx(OMEGA, rel=1e-12)
    assert d["pressure"] == 6e5
    assert len(d["readings"]) == len(d["residuals"]) == len(d["fitted"]) == 19
    assert d["readings"][1] == [5.0, pytest.approx(9.58e-3, rel=1e-12)]  # mm read as m
    assert d["r_squared"] > 0.999
    assert d["for_cycle"] == {"squeeze": {"pressure": 6e5, "consolidation_coefficient": d["consolidation_coefficient"],
                                          "creep_fraction": d["creep_fraction"], "creep_rate": d["creep_rate"],
                                          "final_porosity": d["final_porosity"]}}
    assert d["units"]["consolidation_coefficient"] == "m^2/s"
    assert len(d["curve"]["time"]) == len(d["curve"]["value"]) > 100


def test_readings_as_json_pairs_with_units(client):
    L = model_thickness(TIMES)
    body = {**DEMO, "csv": None, "thickness_readings": [[f"{t / 60} min", f"{v * 1e3} mm"] for t, v in zip(TIMES, L)]}
    del body["csv"]
    d = post(client, body).json()
    assert d["consolidation_coefficient"] == pytest.approx(1.6e-7, rel=1e-4)
    assert d["creep_fraction"] == pytest.approx(0.15, rel=1e-4)
    assert d["final_thickness"] == pytest.approx(0.0071, rel=1e-6)


def test_expressed_liquid_with_the_starting_thickness(client):
    # the cake stays saturated: the liquid out is A (L_0 - L) (derived here)
    v = 0.005 * (0.0102 - model_thickness(TIMES))
    body = {k: v_ for k, v_ in DEMO.items() if k != "csv"}
    body.update(filtrate_readings=[[t, x] for t, x in zip(TIMES, v)], initial_thickness="10.2 mm")
    d = post(client, body).json()
    assert d["measured"] == "filtrate"
    assert d["consolidation_coefficient"] == pytest.approx(1.6e-7, rel=1e-4)
    assert d["final_thickness"] == pytest.approx(0.0071, rel=1e-6)
    assert d["initial_thickness"] == pytest.approx(0.0102, rel=1e-12)
    assert d["initial_thickness_stderr"] is None


def test_a_filtrate_csv_is_read_by_its_header(client):
    v = 0.005 * (0.0102 - model_thickness(TIMES)) * 1e6  # mL
    csv = "time [s]; filtrate [mL]\n" + "\n".join(f"{t}; {x:.6f}".replace(".", ",") for t, x in zip(TIMES, v))
    d = post(client, {**DEMO, "csv": csv, "initial_thickness": "10.2 mm"}).json()
    assert d["measured"] == "filtrate"
    assert d["final_thickness"] == pytest.approx(0.0071, rel=1e-4)


def test_without_creep_no_creep_rate_goes_to_the_cycle(client):
    L = model_thickness(TIMES, B=0.0)
    body = {k: v for k, v in DEMO.items() if k != "csv"}
    body.update(thickness_readings=[[t, x] for t, x in zip(TIMES, L)], creep=False)
    d = post(client, body).json()
    assert d["creep_fraction"] == 0.0 and d["creep_rate"] == 0.0
    assert d["creep_fraction_stderr"] is None
    assert d["consolidation_coefficient"] == pytest.approx(1.6e-7, rel=1e-5)
    assert "creep_rate" not in d["for_cycle"]["squeeze"]


def test_two_drained_faces_quarter_the_coefficient(client):
    L = model_thickness(TIMES, B=0.0)
    body = {k: v for k, v in DEMO.items() if k != "csv"}
    body.update(thickness_readings=[[t, x] for t, x in zip(TIMES, L)], creep=False)
    one = post(client, body).json()
    two = post(client, {**body, "drained_faces": 2}).json()
    # T = C_e t / (omega / faces)^2 (Shirato's convention, from memory)
    assert two["consolidation_coefficient"] == pytest.approx(one["consolidation_coefficient"] / 4, rel=1e-6)


@pytest.mark.parametrize("change, field, words", [
    ({"pressure": "0.5 Pa"}, "pressure", "at least"),
    ({"dry_solids_mass": "-58 g"}, "dry_solids_mass", "above 0"),
    ({"dry_solids_mass": "58 mm"}, "dry_solids_mass", ""),
    ({"solids_density": "26500 kg/m^3"}, "solids_density", "at most"),
    ({"area": "0 cm^2"}, "area", "at least"),
    ({"drained_faces": 3}, "drained_faces", ""),
    ({"creep": "maybe"}, "creep", ""),
    ({"unknown": 1}, "unknown", ""),
    ({"csv": "time [s], pressure [bar]\n0, 1\n1, 2\n"}, "csv", "thickness column"),
    ({"csv": "time [s], thickness [mm]\n0, 10\n5, x\n"}, "csv", "line 3"),
    ({"csv": "time [s], thickness\n0, 10\n5, 9\n"}, "csv", "no unit"),
    ({"csv": "time [s], thickness [mm]\n0, 10\n5, 9.5\n10, 9.2\n"}, "csv", "at least 8"),
    ({"csv": DEMO_CSV.replace("\n10, 9.34", "\n3, 9.34")}, "csv", "reading 3: times must rise"),
    ({"csv": DEMO_CSV.replace("[mm]", "[m]")}, "csv", "reading 1: the thickness must be above 0 and at most 1 m"),
    ({"csv": DEMO_CSV.replace("[mm]", "[um]")}, "csv", "not above the solids' own thickness"),
    ({"csv": DEMO_CSV.replace("0, 10.19", "-1, 10.19")}, "csv", "reading 1: the time must be at least 0"),
    ({"csv": "time [s], filtrate [mL]\n" + "\n".join(f"{t}, {t / 100}" for t in TIMES)}, "initial_thickness",
     "thickness when the squeeze starts"),
])
def test_bad_input_is_a_422_naming_the_field(client, change, field, words):
    errors = errors_of(post(client, {**DEMO, **change}))
    assert field in errors, errors
    assert words in errors[field]


def test_readings_that_rise_are_refused_at_the_readings(client):
    L = model_thickness(TIMES)[::-1]
    body = {k: v for k, v in DEMO.items() if k != "csv"}
    body.update(thickness_readings=[[t, x] for t, x in zip(TIMES, L)])
    errors = errors_of(post(client, body))
    assert "does not fall" in errors["thickness_readings"]


def test_a_bad_reading_is_named_by_its_index(client):
    L = list(model_thickness(TIMES))
    body = {k: v for k, v in DEMO.items() if k != "csv"}
    body.update(thickness_readings=[[t, x] for t, x in zip(TIMES, L)])
    body["thickness_readings"][4][0] = 2  # before reading 3's 10 s
    assert "thickness_readings.4.0" in errors_of(post(client, body))
    body["thickness_readings"][4] = [30, "0 mm"]
    assert "thickness_readings.4.1" in errors_of(post(client, body))


def test_an_impossible_solids_mass_names_the_readings_and_the_cake(client):
    # 300 g of solids on 50 cm^2 is 22.6 mm of solids: more than the 10 mm cake
    errors = errors_of(post(client, {**DEMO, "dry_solids_mass": "300 g"}))
    assert {"csv", "dry_solids_mass", "solids_density", "area"} <= set(errors)


def test_exactly_one_way_of_giving_readings(client):
    body = {**DEMO, "thickness_readings": [[0, 0.01], [5, 0.009], [10, 0.0085]]}
    assert "give only one of" in json.dumps(errors_of(post(client, body)))
    body = {k: v for k, v in DEMO.items() if k != "csv"}
    assert "give one of" in json.dumps(errors_of(post(client, body)))


def test_the_page_twin_renders_the_results_and_links_a_scenario(client):
    r = client.post("/ui/squeeze-fit", json=DEMO)
    assert r.status_code == 200, r.text
    d = r.json()
    assert set(d["figures"]) == {"squeeze", "squeeze_residuals"}
    fig = d["figures"]["squeeze"]
    assert fig["layout"]["xaxis"]["title"]["text"].endswith("(min)")
    assert fig["layout"]["yaxis"]["title"]["text"] == "Cake thickness (mm)"
    assert fig["data"][0]["y"][1] == pytest.approx(9.58, rel=1e-12)
    assert all(np.isfinite(fig["data"][1]["y"]))
    html = d["html"]
    assert "Open a new scenario with this squeeze" in html
    assert "Caution." in html  # duty of care
    link = html.split('id="use-squeeze-in-scenario" href="')[1].split('"')[0].replace("&#34;", '"')
    link = link.replace("&amp;", "&")
    prefill = json.loads(parse_qs(urlparse(link).query)["prefill"][0])
    sq = prefill["cycle"]["squeeze"]
    assert sq["pressure"] == "6 bar"
    assert sq["consolidation_coefficient"].endswith(" m**2/s")
    assert float(sq["consolidation_coefficient"].split()[0]) == pytest.approx(d["results"]["consolidation_coefficient"],
                                                                             rel=1e-3)
    assert sq["creep_rate"].endswith(" 1/s")
    assert sq["final_porosity"] == pytest.approx(d["results"]["final_porosity"], abs=1e-4)
    assert set(sq) == {"pressure", "consolidation_coefficient", "creep_fraction", "creep_rate", "final_porosity"}
    # the new scenario page opens with it
    assert client.get(link).status_code == 200


def test_the_route_is_in_the_api_schema(client):
    schema = client.get("/openapi.json").json()
    assert "/api/v1/squeeze-fit" in schema["paths"]
    assert "/ui/squeeze-fit" not in schema["paths"]
    props = schema["components"]["schemas"]["SqueezeFitRequest"]["properties"]
    assert props["pressure"]["x-si-unit"] == "Pa"
    assert "Allowed" in props["dry_solids_mass"]["description"]


# a plant engineer's test: 150 g of 2400 kg/m^3 solids on 80 cm^2 at 6 bar, 30.04 -> 22.08 mm,
# the reading at 600 s typed as 355 instead of 22.53 (mm)
TYPO_TIMES = [0, 5, 10, 15, 20, 30, 45, 60, 90, 120, 180, 240, 300, 420, 600, 900, 1200, 1500, 1800]
TYPO_MM = [30.04, 29.04, 28.63, 28.30, 28.03, 27.57, 27.00, 26.52, 25.73, 25.11, 24.21, 23.64, 23.26, 22.83, 355,
           22.32, 22.20, 22.13, 22.08]
TYPO = {"name": "typo", "pressure": "6 bar", "dry_solids_mass": "150 g", "solids_density": "2400 kg/m^3",
        "area": "80 cm^2", "csv": "time [s], thickness [mm]\n" + "\n".join(
            f"{t}, {v:g}" for t, v in zip(TYPO_TIMES, TYPO_MM))}


def test_one_thickness_typo_is_refused_naming_the_reading(client):
    # it gave HTTP 200 with a cake swelling to 173 mm and 95.5 % porosity, and the scenario button
    errors = errors_of(post(client, TYPO))
    assert errors["csv"].startswith("reading 15: 355 mm lies further outside the first and last readings "
                                    "(30.04 mm to 22.08 mm)")
    body = {k: v for k, v in TYPO.items() if k != "csv"}
    body["thickness_readings"] = [[t, f"{v:g} mm"] for t, v in zip(TYPO_TIMES, TYPO_MM)]
    assert "355 mm" in errors_of(post(client, body))["thickness_readings.14.1"]
    # the page twin: the same refusal, so no results and no "Open a new scenario" button
    r = client.post("/ui/squeeze-fit", json=TYPO)
    assert r.status_code == 422 and "Open a new scenario" not in r.text and "reading 15" in r.text
    # with the reading as meant, the test fits, shrinking the cake
    d = post(client, {**TYPO, "csv": TYPO["csv"].replace("600, 355", "600, 22.53")}).json()
    assert d["final_thickness"] < d["initial_thickness"] and d["final_porosity"] < d["initial_porosity"]


# ---- inputs outside the trade's usual range (plausibility.SQUEEZE_USUAL; common practice, no source) ----

def test_squeeze_inputs_outside_the_usual_range_are_flagged_and_calculated_as_given(client):
    r = post(client, {**DEMO, "area": 50, "pressure": "6 kPa"})  # 50 meant cm², kPa meant bar
    assert r.status_code == 200, r.text
    flags = {w["field"]: w for w in r.json()["input_warnings"]}
    assert set(flags) == {"area", "pressure"}
    assert flags["area"]["message"].startswith("50 m² (a bare number is in SI units) is outside the usual 0.001–0.05 m²")
    assert 'for 50 cm², send "50 cm²"' in flags["area"]["message"]
    assert flags["pressure"]["message"].startswith("6 kPa is outside the usual 500–1600 kPa")
    assert "It is 83 times too small" in flags["pressure"]["message"]  # 500 / 6
    assert flags["area"]["label"] == "Piston (cake) area"
    assert post(client, DEMO).json()["input_warnings"] == []


def test_a_fitted_consolidation_coefficient_outside_the_usual_range_is_a_warning(client):
    # the readings fix C_e / ω² (the model's time scale): the area read as 50 m² instead of 50 cm²
    # makes ω 10⁴ times smaller and C_e 10⁸ times, far below the usual 1e-9–1e-5 m²/s (derived here)
    demo = post(client, DEMO).json()
    assert not any("consolidation coefficient" in w for w in demo["warnings"])
    d = post(client, {**DEMO, "area": 50}).json()
    assert d["consolidation_coefficient"] == pytest.approx(demo["consolidation_coefficient"] * 1e-8, rel=1e-3)
    said = [w for w in d["warnings"] if "consolidation coefficient" in w]
    assert len(said) == 1 and "outside the usual 1e-9–1e-5 m²/s" in said[0], d["warnings"]


def test_the_page_twin_shows_the_flags(client):
    html = client.post("/ui/squeeze-fit", json={**DEMO, "pressure": "6 kPa"}).json()["html"]
    assert "Squeeze pressure:" in html and "6 kPa is outside the usual 500–1600 kPa" in html
