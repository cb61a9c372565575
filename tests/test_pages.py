"""HTML pages and the demo cases: they load, tell their story, and fetch nothing from outside."""

import re

import pytest

from server.demo import load_demo_scenarios
from server.schemas.cycle import CycleRequest
from server.settings import PROJECT_ROOT
from server.solve import solve_results

DEMOS = load_demo_scenarios(PROJECT_ROOT / "demo_cases")


def results_pane(html: str) -> str:
    """The editor's results pane (between its opening tag and the initial-figures script)."""
    start = html.index('<div id="results"')
    return html[start:html.index("<script", start)]


def test_home_lists_every_demo_case(client):
    r = client.get("/")
    assert r.status_code == 200
    for d in DEMOS:
        assert f"/demo/{d.slug}" in r.text
    assert "licensed" in r.text  # the caution is on the page


@pytest.mark.parametrize("demo", DEMOS, ids=lambda d: d.slug)
def test_each_demo_page_shows_figures_with_units_and_the_caution(client, demo):
    r = client.get(f"/demo/{demo.slug}")
    assert r.status_code == 200
    # the results pane alone: the editor's unit menus would hold every unit string anyway
    pane = results_pane(r.text)
    for unit in ("min", "m³/h", "kg/h", "mm", "%"):
        assert re.search(r"\d\s*" + re.escape(unit), pane), unit
    assert "Caution" in pane


def test_the_wash_time_figure_shows_only_for_a_cycle_with_a_wash(client):
    # a "Wash time 0 min" tile on an unwashed cake read as a wash of no length (common practice, no source)
    washed = results_pane(client.get("/demo/iron_oxide_pigment").text)
    unwashed = results_pane(client.get("/demo/copper_concentrate").text)
    assert 'data-key="wash_time"' in washed and 'data-key="filtration_time"' in unwashed
    assert 'data-key="wash_time"' not in unwashed


def test_unknown_demo_is_a_404_page(client):
    r = client.get("/demo/no-such-case")
    assert r.status_code == 404
    assert "Not found" in r.text


def test_pages_load_nothing_from_another_host(client):
    for path in ["/"] + [f"/demo/{d.slug}" for d in DEMOS]:
        html = client.get(path).text
        for url in re.findall(r'(?:src|href)="([^"]+)"', html):
            assert not re.match(r"^(https?:)?//", url), (path, url)
            if url.startswith("/static/"):
                assert client.get(url).status_code == 200


def test_there_are_at_least_four_invented_demo_cases():
    assert len(DEMOS) >= 4
    for d in DEMOS:
        assert "Invented" in d.description


def _solve(slug):
    demo = next(d for d in DEMOS if d.slug == slug)
    return solve_results(CycleRequest.model_validate(demo.inputs))


def test_demo_chamber_limited_case_is_limited_by_the_chambers():
    r = _solve("gypsum_chamber_limited")
    assert r["best"]["limited_by"] == "chambers_full"
    assert r["derived"]["throughput_gain_unconstrained"] > 0.2


def test_demo_washed_case_spends_time_washing():
    r = _solve("iron_oxide_pigment")
    assert r["best"]["wash_time"] > r["best"]["filtration_time"]


def test_demo_sludge_case_is_compressible_and_slow():
    r = _solve("hydroxide_sludge")
    assert r["derived"]["resistance_at_feed"] > 1e12
    assert r["best"]["filtration_time"] > 20 * 60


def test_demo_concentrate_case_reaches_its_optimum_before_the_chambers_fill():
    r = _solve("copper_concentrate")
    assert r["best"]["limited_by"] == "optimum"
    assert r["best"]["chamber_fill"] > 0.5


def test_demo_pump_fed_case_ends_on_the_flow_threshold():
    r = _solve("kaolin_pump_fed")
    assert r["derived"]["feed_mode"] == "pump_curve"
    assert r["at_end"]["end_reason"] == "flow"
    assert max(r["curves"]["pressure"]) <= 7e5 * (1 + 1e-12)


def test_vendor_plotly_and_every_page_load_locally(client):
    r = client.get("/vendor/plotly.min.js")
    assert r.status_code == 200 and len(r.content) > 1_000_000
    for path in ("/scenario/new", "/lab", "/scenarios", "/api", "/favicon.ico"):
        page = client.get(path)
        assert page.status_code == 200, path
        for url in re.findall(r'(?:src|href)="([^"]+)"', page.text):
            assert not re.match(r"^(https?:)?//", url), (path, url)


def test_static_files_are_hashed_cached_and_kept_inside_their_folder(client):
    html = client.get("/").text
    css = re.search(r'href="(/static/css/app\.css\?v=[0-9a-f]{12})"', html).group(1)
    r = client.get(css)
    assert r.status_code == 200 and "immutable" in r.headers["cache-control"]
    for escape in ("/static/../server/app.py", "/static/%2e%2e/server/app.py", "/static/..%2fserver/app.py"):
        assert client.get(escape).status_code == 404, escape


def test_demo_concentrate_case_checks_its_production_target():
    r = _solve("copper_concentrate")
    assert r["target"]["quantity"] == "solids_throughput" and r["target"]["hours_per_day"] == 22
    assert not r["target"]["meets"] and r["target"]["presses_needed"] == 2


def test_api_page_describes_every_route_without_a_cdn(client):
    html = client.get("/api").text
    for path in ("/api/v1/cycle", "/api/v1/lab-fit", "/api/v1/scenarios"):
        assert path in html
    assert "CycleRequest" in html and "medium_resistance" in html
    assert client.get("/docs").status_code == 404  # FastAPI's viewer would load from a CDN


def test_the_lab_pages_name_boxes_bring_up_a_keyboard_for_words(client):
    # a phone showed a number pad for a test's name (inputmode "decimal" on every box: a plant-engineer
    # check); the boxes for figures keep it
    page = client.get("/lab").text
    names = re.findall(r'<input type="text" data-name="name"[^>]*>', page)
    figures = re.findall(r'<input type="text" data-name="pressure"[^>]*>', page)
    assert names and all("inputmode" not in box for box in names)
    assert figures and all('inputmode="decimal"' in box for box in figures)
