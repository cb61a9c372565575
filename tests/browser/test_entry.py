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
