"""Numbers and units as engineers type them, in the editor and the lab page (issue 10)."""

import pytest

from tests.browser.test_editor import clean, headline, wait_results
from tests.browser.test_lab import DATA, fill_test

pytestmark = [pytest.mark.browser, pytest.mark.slow]
AREA = "#f-press-plate_face_area-plates"


def calculate(page) -> dict:
    """Press Calculate; the /ui/results answer (the API results) as JSON."""
    with page.expect_response(lambda r: "/ui/results" in r.url) as answer:
        page.click("#calculate")
    return answer.value


def test_an_ambiguous_comma_asks_and_nothing_is_calculated(page):
    page.goto(page.base + "/demo/copper_concentrate")
    before = headline(page)
    page.fill(AREA, "19,000")
    page.select_option("select[name='press.plate_face_area@unit']", "cm^2")
    r = calculate(page)
    assert r.status == 422
    error = page.locator(".field[data-path='press.plate_face_area'] .error")
    error.wait_for(state="visible")
    assert "19 000 or 19.000" in error.inner_text()
    assert "stale" in page.get_attribute("#results", "class")  # the earlier results are greyed, not updated
    assert page.inner_text("#status") != "Done."
    page.watch.bad_responses.clear()  # the 422 was the point
    page.watch.console_errors.clear()
    # the same area with a space grouping the digits: 19 000 cm^2 = 1.9 m^2, the demo's own
    page.fill(AREA, "19 000")
    r = calculate(page)
    wait_results(page)
    assert r.json()["results"]["derived"]["filter_area"] == pytest.approx(2 * 60 * 1.9, rel=1e-12)
    assert headline(page) == before
    clean(page)


def test_dot_grouping_with_a_decimal_comma_and_a_typed_unit(page):
    page.goto(page.base + "/demo/copper_concentrate")
    page.select_option("select[name='press.plate_face_area@unit']", "cm^2")
    page.fill(AREA, "19.000,5")  # 19000.5 cm^2
    page.fill("#f-feed-pressure-constant_pressure", "2 atm")  # the menu says bar: the typed unit wins
    r = calculate(page)
    wait_results(page)
    data = r.json()["results"]
    assert data["derived"]["filter_area"] == pytest.approx(2 * 60 * 1.90005, rel=1e-12)
    # 2 atm is below the usual 3-20 bar: flagged beside the field, in the unit typed
    flag = page.locator(".field[data-path='feed.pressure'] .flag")
    flag.wait_for(state="visible")
    assert flag.inner_text().startswith("2 atm is outside the usual 2.96–19.7 atm")
    assert [w["field"] for w in data["input_warnings"]] == ["feed.pressure"]
    clean(page)


def test_hints_and_standard_errors_follow_the_unit_chosen(page):
    page.goto(page.base + "/demo/copper_concentrate")
    hint = page.locator("#f-feed-pressure-constant_pressure-hint")
    assert "3–20 bar" in hint.inner_text()
    page.select_option("select[name='feed.pressure@unit']", "psi")
    assert "43.5–290 psi" in hint.inner_text()
    page.select_option("select[name='cake.resistance@unit']", "ft/lb")
    assert page.inner_text("[data-unit-label-of='cake.resistance']") == "ft/lb"
    page.fill("#f-cake-resistance", "1.49e12")
    page.fill("#f-cake-resistance_stderr", "1e11")
    body = page.evaluate("window.presscycle.collect()")
    assert body["cake"]["resistance_stderr"] == "1e11 ft/lb"  # not m/kg: a 1.49x slip otherwise
    clean(page)


def test_a_failed_lab_fit_greys_the_earlier_fit(page):
    page.goto(page.base + "/lab")
    block = page.locator("#tests > fieldset").nth(0)
    fill_test(block, "Example 14.2-1", "338", (DATA / "geankoplis_14_2_1.csv").read_text())
    page.click("#fit")
    page.wait_for_selector("[data-testid=lab-results]")
    assert "stale" not in page.get_attribute("#results", "class")
    block.locator('[data-name="csv"]').fill("time [s], filtrate [L]\n4.4, 0.498\n9.5, x\n")
    assert "stale" in page.get_attribute("#results", "class")  # an edit already marks it
    page.click("#fit")
    block.locator(".field[data-path='csv'] .error").wait_for(state="visible")
    assert "stale" in page.get_attribute("#results", "class")
    assert "earlier readings" in page.inner_text("#results .stale-note")
    page.watch.bad_responses.clear()


def test_a_decimal_comma_in_the_thickness_list_stays_one_thickness(page):
    page.goto(page.base + "/demo/copper_concentrate")
    page.fill("#f-compare_thicknesses", "32,5; 40")
    assert page.evaluate("window.presscycle.collect()")["compare_thicknesses"] == ["32,5 mm", "40 mm"]
    page.fill("#f-compare_thicknesses", "25,32,40")  # commas alone between entries
    assert page.evaluate("window.presscycle.collect()")["compare_thicknesses"] == ["25 mm", "32 mm", "40 mm"]
    r = calculate(page)
    wait_results(page)
    assert [row["chamber_thickness"] for row in r.json()["results"]["thickness_comparison"]] == \
        pytest.approx([0.025, 0.032, 0.040])
    clean(page)


def test_an_edit_while_calculating_leaves_the_answer_marked_out_of_date(page):
    # every answer is held back 1.5 s, so the downtime can change while the first is on its way
    page.add_init_script("""{
      const real = window.fetch;
      window.fetch = (...args) => new Promise((ok) => setTimeout(() => ok(real(...args)), 1500));
    }""")
    page.goto(page.base + "/demo/iron_oxide_pigment")
    page.fill("#f-cycle-downtime", "30")
    page.click("#calculate")
    page.fill("#f-cycle-downtime", "80")  # while the 30-minute answer is on its way
    page.wait_for_function("document.getElementById('status').textContent.startsWith('Done')", timeout=20000)
    assert page.inner_text("#status") == "Done, for the inputs as they were."
    assert "stale" in page.get_attribute("#results", "class")
    # Save then calculates the 80-minute inputs first: the saved page shows what was calculated
    page.fill("#save-name", "edited while calculating")
    page.click("#save")
    page.wait_for_url(lambda url: "/s/" in url, timeout=30000)
    assert "80 min" in page.inner_text("[data-testid=inputs]")
    # the saved cycle is the 80-minute one: the API's answer for those inputs, as shown (3 figures)
    import json

    from tests.browser.test_layout import DEMOS
    inputs = json.loads((DEMOS / "iron_oxide_pigment.json").read_text())["inputs"]
    inputs["cycle"]["downtime"] = "80 min"
    api = page.request.post(page.base + "/api/v1/cycle", data=inputs).json()
    assert headline(page)["cycle_time"] == f"{api['best']['cycle_time'] / 60:.3g} min"
    clean(page)


def test_solids_density_is_set_aside_when_the_cake_fixes_it(page):
    page.goto(page.base + "/demo/copper_concentrate")
    page.select_option("#c-cake-liquid_basis", "bulk_moisture")
    assert page.is_disabled("#f-slurry-solids_density")
    page.fill("#f-cake-dry_bulk_density-bulk_moisture", "3400")
    page.fill("#f-cake-moisture-bulk_moisture", "9.5")
    body = page.evaluate("window.presscycle.collect()")
    assert "solids_density" not in body["slurry"]
    r = calculate(page)
    wait_results(page)
    assert r.status == 200
    page.select_option("#c-cake-liquid_basis", "moisture")
    assert not page.is_disabled("#f-slurry-solids_density")
    clean(page)


def test_printing_the_editor_prints_its_inputs_in_words(page):
    page.goto(page.base + "/demo/kaolin_pump_fed")
    assert not page.locator("[data-testid=print-inputs]").is_visible()
    page.emulate_media(media="print")
    table = page.locator("[data-testid=print-inputs]")
    assert table.is_visible()
    assert "centrifugal pump curve" in table.inner_text() and "Chamber thickness" in table.inner_text()
    page.emulate_media(media="screen")


def test_a_copy_keeps_the_inputs_the_form_does_not_show(page):
    # a scenario with the cake's local laws (API-only): "Edit a copy" must send them back
    import json

    from tests.browser.test_layout import DEMOS
    inputs = json.loads((DEMOS / "copper_concentrate.json").read_text())["inputs"]
    inputs["cake"] = {"local": {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5,
                                "solidosity_at_zero_stress": 0.35, "solidosity_exponent": 0.08,
                                "stress_scale": "0.1 bar"}, "tested_pressure_range": ["3 bar", "8 bar"]}
    saved = page.request.post(page.base + "/api/v1/scenarios", data={"name": "local laws", "inputs": inputs})
    assert saved.status == 201, saved.text()
    page.goto(page.base + saved.json()["link"] + "/copy")
    assert "local laws" in page.inner_text("[data-testid=carried]")
    body = page.evaluate("window.presscycle.collect()")
    assert body["cake"]["local"] == inputs["cake"]["local"]
    assert body["cake"]["tested_pressure_range"] == ["3 bar", "8 bar"]
    r = calculate(page)
    wait_results(page)
    assert r.status == 200
    clean(page)
