"""The pages' partial updates in-process: POST /ui/results (editor) and POST /ui/lab-fit (lab page)."""

import html
import json
import re
from pathlib import Path

from tests.test_api_labfit import EXAMPLE


def test_results_update_gives_the_pane_the_charts_and_the_api_answer(client, base_request):
    r = client.post("/ui/results", json=base_request)
    assert r.status_code == 200, r.text
    data = r.json()
    assert data["results"] == client.post("/api/v1/cycle", json=base_request).json()
    assert set(data["figures"]) == {"throughput_time", "throughput_thickness", "throughput_map", "filtration"}
    html = data["html"]
    assert "Caution" in html and "m³/h" in html and "licensed" in html
    best_min = data["results"]["best"]["filtration_time"] / 60
    assert f"{best_min:.3g}" in html  # the pane shows the solver's number, in minutes


def test_results_update_in_us_units(client, base_request):
    data = client.post("/ui/results?units=us", json=base_request).json()
    assert "US gpm" in data["html"] and "m³/h" not in data["html"]
    assert "US gpm" in data["figures"]["throughput_time"]["layout"]["yaxis"]["title"]["text"]


def test_results_update_refuses_bad_input_as_json_at_the_field(client, base_request):
    base_request["feed"]["pressure"] = "1e12 Pa"
    r = client.post("/ui/results", json=base_request)  # no Accept header, as editor.js sends it
    assert r.status_code == 422 and r.headers["content-type"].startswith("application/json")
    assert [d["field"] for d in r.json()["detail"]] == ["feed.pressure"]


def test_results_update_refuses_an_unknown_unit_system(client, base_request):
    r = client.post("/ui/results?units=zz", json=base_request)
    assert r.status_code == 422
    assert r.json()["detail"][0]["field"] == "query.units"
    assert "'si' or 'us'" in r.json()["detail"][0]["msg"]


def test_a_solver_refusal_lands_at_the_field_in_the_update(client, base_request):
    base_request["cycle"]["end"] = {"criterion": "pressure", "pressure": "9 bar"}  # above the 5 bar feed
    r = client.post("/ui/results", json=base_request)
    assert r.status_code == 422
    assert [d["field"] for d in r.json()["detail"]] == ["cycle.end.pressure"]


def test_lab_fit_update_gives_the_pane_charts_and_a_scenario_link(client):
    r = client.post("/ui/lab-fit", json={"tests": [EXAMPLE]})
    assert r.status_code == 200, r.text
    data = r.json()
    assert data["results"]["tests"][0]["resistance"] > 0
    assert data["figures"]
    link = html.unescape(re.search(r'href="(/scenario/new\?prefill=[^"]+)"', data["html"]).group(1))
    editor = client.get(link)  # the link opens the editor with the fitted cake and cloth filled in
    assert editor.status_code == 200
    alpha = data["results"]["for_cycle"]["cake"]["resistance"]
    assert f'value="{alpha:.4g}"' in editor.text


def test_lab_fit_update_refuses_bad_readings_at_the_test(client):
    bad = dict(EXAMPLE, csv="time [s], filtrate [mL]\n1, 10\n")
    r = client.post("/ui/lab-fit", json={"tests": [bad]})
    assert r.status_code == 422
    assert r.json()["detail"][0]["field"].startswith("tests.0")


def _pane(client, body) -> str:
    r = client.post("/ui/results?units=si", json=body)
    assert r.status_code == 200, r.text
    return r.json()["html"]


def test_pane_states_chamber_volume_area_convention_and_daily_basis(client):
    import json
    from pathlib import Path

    body = json.loads((Path(__file__).resolve().parents[1] / "demo_cases" / "copper_concentrate.json").read_text())["inputs"]
    html = _pane(client, body)  # 60 chambers, 1.9 m^2 per face, 40 mm: 4.56 m^3 in all, 76 L each
    assert "Filter area <span class=\"muted\">(both faces of every chamber)</span>" in html
    assert "4.56 m³; 76.0 L" in html
    assert "Dry solids per day (24 h running)" in html
    assert "running 22.0 h a day\n    (averaged over the calendar day; the figures above count 24 h of running)" in html


def test_a_range_too_narrow_to_show_says_so(client):
    import json
    from pathlib import Path

    body = json.loads((Path(__file__).resolve().parents[1] / "demo_cases" / "copper_concentrate.json").read_text())["inputs"]
    body["cake"]["resistance_stderr"] = "1e3 m/kg"  # a billionth of alpha: no visible spread
    html = _pane(client, body)
    assert "the standard errors move it by less than the last digit shown" in html
    assert " to " not in html.split('data-testid="uncertainty"')[1].split("</p>")[0].split("filtration time of")[0]


def test_the_solvers_warnings_read_in_us_units(client):
    # the pump note said "(80 m³/h)" on a page in US units (a plant-engineer check)
    inputs = json.loads((Path(__file__).resolve().parents[1] / "demo_cases" / "kaolin_pump_fed.json").read_text())["inputs"]
    html = client.post("/ui/results?units=us", json=inputs).json()["html"]
    notes = [p.split("</p>")[0] for p in html.split('<p class="warning" role="status">')[1:] if "highest flow" in p]
    assert len(notes) == 1 and "(352.2 US gpm)" in notes[0] and "m³/h" not in notes[0], notes
    html = client.post("/ui/results?units=si", json=inputs).json()["html"]
    assert "(80 m³/h)" in html
