"""One error path: the same mistake gets the same words from every route; pages show them as a
page, never as raw JSON; solver refusals land at the field they concern."""

import json

import pytest

from server.solve import API_PATHS, api_path
from tests.test_forms import request_has


def _detail(r):
    assert r.status_code == 422, r.text
    return [(d["field"], d["msg"]) for d in r.json()["detail"]]


@pytest.mark.parametrize("feed", [{"mode": "bogus", "pressure": 5e5}, {"pressure": 5e5}])
def test_a_bad_feed_mode_gets_the_same_words_from_every_api_route(client, base_request, feed):
    base_request["feed"] = feed
    cycle = _detail(client.post("/api/v1/cycle", json=base_request))
    saved = _detail(client.post("/api/v1/scenarios", json={"name": "x", "inputs": base_request}))
    imported = _detail(client.post("/api/v1/scenarios/import", content=json.dumps({"inputs": base_request}),
                                   headers={"content-type": "application/json"}))
    assert len(cycle) == 1 and "constant_pressure" in cycle[0][1]
    assert saved == imported == [("inputs." + field, msg) for field, msg in cycle]


def test_an_unknown_field_and_a_range_get_the_same_words_everywhere(client, base_request):
    base_request["slurry"]["solids_fraction"] = 0.2
    base_request["press"]["chamber_thickness"] = "2 m"
    cycle = sorted(_detail(client.post("/api/v1/cycle", json=base_request)))
    saved = sorted(_detail(client.post("/api/v1/scenarios", json={"name": "x", "inputs": base_request})))
    assert saved == [("inputs." + f, m) for f, m in cycle]
    assert ("slurry.solids_fraction", "unknown field (check the spelling)") in cycle


@pytest.mark.parametrize("path", [
    "/compare?ids=a,b&units=zz",
    "/s/nosuch?units=zz",
    "/scenarios?page=0",
])
def test_a_bad_query_on_a_page_is_an_error_page_in_words(client, path):
    r = client.get(path)
    assert r.status_code == 422
    assert r.headers["content-type"].startswith("text/html")
    assert "Cannot use this input" in r.text and '"detail"' not in r.text
    name = path.split("?")[1].split("=")[-2].split("&")[-1]
    assert f"{name}:" in r.text  # the query parameter, as the address shows it


def test_the_same_bad_query_on_the_api_is_json(client):
    r = client.get("/api/v1/scenarios?page=0")
    assert r.status_code == 422 and r.json()["detail"][0]["field"] == "query.page"


@pytest.mark.parametrize("end,feed,field", [
    # the terminal pressure and the feed pressure are both called "pressure" in their objects
    ({"criterion": "pressure", "pressure": "9 bar"}, {"mode": "constant_pressure", "pressure": "5 bar"},
     "cycle.end.pressure"),
    ({"criterion": "flow", "flow": "500 m^3/h"}, {"mode": "constant_rate", "flow": "20 m^3/h",
                                                  "max_pressure": "6 bar"}, "cycle.end.flow"),
])
def test_solver_refusals_land_at_their_own_field(client, base_request, end, feed, field):
    base_request["feed"], base_request["cycle"]["end"] = feed, end
    assert [f for f, _ in _detail(client.post("/api/v1/cycle", json=base_request))] == [field]


@pytest.mark.parametrize("change,field", [
    # raised by the slurry balance, the pump curve and the end criterion of the solver
    ({"slurry": {"solids_mass_fraction": 0.9, "solids_density": 2600, "viscosity": 1e-3},
      "cake": {"resistance": 1e11, "moisture": 0.5}}, "slurry.solids_mass_fraction"),
    ({"slurry": {"solids_concentration": 3000, "solids_density": 2600, "viscosity": 1e-3}},
     "slurry.solids_concentration"),
    ({"feed": {"mode": "pump_curve", "points": [[0, 5e5], [0.01, 6e5]]}}, "feed.points"),
])
def test_solver_refusals_from_each_object_land_at_their_field(client, base_request, change, field):
    base_request.update(change)
    assert [f for f, _ in _detail(client.post("/api/v1/cycle", json=base_request))] == [field]


def test_every_solver_path_maps_to_a_field_of_the_request():
    for solver_path, api in API_PATHS.items():
        assert request_has(".".join(api)), solver_path
    assert api_path("feed.steps") == ("body", "feed", "steps")
    assert api_path("cycle.wash_pressure") == ("body", "cycle", "wash_pressure")
    assert api_path("nothing.known") == ("body",)
    assert api_path("water.temperature") == ("body", "slurry", "temperature")
    assert api_path("end.flow") == ("body", "cycle", "end", "flow")


def test_a_limit_is_written_without_a_trailing_zero(client):
    # "Hours a working day: must be at most 24.0" (a plant-engineer check): 24, as people write it,
    # and with its unit (a later check: "must be at most 24" said neither hours nor the range)
    r = client.post("/api/v1/plan", json={"inputs": {}, "target": {"dry_solids_per_day": "100 t/day",
                                                                   "hours_per_day": 30}, "samples": 0})
    assert r.status_code == 422
    msgs = {d["field"]: d["msg"] for d in r.json()["detail"]}
    assert msgs["target.hours_per_day"] == "must be at least 0.1 h and at most 24 h; got 30 h", msgs

