"""The scenario editor in a real browser (Debian's Chromium driven by playwright)."""

import re

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]


def headline(page) -> dict:
    out = {}
    for fig in page.locator("[data-testid=headline] .fig").all():
        # (a figure and its unit are joined by a no-break space: read as the space a person sees)
        out[fig.get_attribute("data-key")] = fig.locator("dd").inner_text().replace("\xa0", " ")
    return out


def wait_results(page):
    try:
        page.wait_for_function("document.getElementById('status').textContent === 'Done.'", timeout=20000)
    except Exception:
        raise AssertionError(f"no results: status {page.inner_text('#status')!r}, url {page.url}") from None


def svg_texts(page, selector) -> list[str]:
    return page.eval_on_selector_all(selector, "els => els.map(e => e.textContent)")


def charts_rendered(page) -> int:
    return page.locator(".chart .plot .main-svg").count()


def clean(page):
    assert page.watch.console_errors == [], page.watch.console_errors
    assert page.watch.bad_responses == [], page.watch.bad_responses


def test_home_opens_a_demo_case_with_figures_and_four_charts(page):
    page.goto(page.base + "/")
    assert page.get_by_role("main").get_by_role("link", name="New scenario").is_visible()
    page.locator(".card a").first.click()
    page.wait_for_selector("[data-testid=headline]")
    page.wait_for_function("document.querySelectorAll('.chart .plot .main-svg').length >= 4")
    figs = headline(page)
    assert re.search(r"\d", figs["filtration_time"]) and "min" in figs["filtration_time"]
    assert "m³/h" in figs["filtrate_throughput"]
    assert page.get_by_text("Caution.").is_visible()
    clean(page)


def test_change_a_field_and_its_unit_then_calculate(page, tmp_path_factory):
    page.goto(page.base + "/demo/copper_concentrate")
    page.wait_for_selector("[data-testid=headline]")
    before = headline(page)
    # downtime 18 min -> 1.5 h: a longer downtime means a longer optimum filtration
    page.fill("#f-cycle-downtime", "1.5")
    page.select_option("select[name='cycle.downtime@unit']", "h")
    page.click("#calculate")
    wait_results(page)
    after = headline(page)
    assert after["cycle_time"] != before["cycle_time"]
    assert after["filtrate_throughput"] != before["filtrate_throughput"]
    # the form keeps what was typed, with its unit
    assert page.input_value("#f-cycle-downtime") == "1.5"
    assert page.locator("select[name='cycle.downtime@unit']").input_value() == "h"
    assert charts_rendered(page) >= 4
    shots = tmp_path_factory.mktemp("screenshots")
    page.screenshot(path=str(shots / "results.png"), full_page=True)
    print(f"screenshot of the results page: {shots / 'results.png'}")
    clean(page)


def test_switch_results_to_us_customary_units(page):
    page.goto(page.base + "/demo/hydroxide_sludge")
    page.wait_for_selector("[data-testid=headline]")
    page.check("input[name='@display'][value='us']")
    wait_results(page)
    figs = headline(page)
    assert "US gpm" in figs["filtrate_throughput"]
    assert "lb" in figs["dry_cake_mass"]
    assert "in" in figs["cake_thickness"]
    axis = svg_texts(page, "#chart-throughput_time .xtitle, #chart-throughput_time .ytitle")
    assert any("US gpm" in t for t in axis)
    clean(page)


def test_the_plan_link_stays_in_us_units_until_an_edit(page):
    page.goto(page.base + "/demo/hydroxide_membrane_wash")
    link = page.locator("[data-testid=plan-link] a")
    assert link.get_attribute("href") == "/demo/hydroxide_membrane_wash/plan"
    page.check("input[name='@display'][value='us']")
    wait_results(page)
    page.wait_for_function("document.querySelector('#results .headline').textContent.includes('US gpm')")
    assert link.get_attribute("href") == "/demo/hydroxide_membrane_wash/plan?units=us"
    page.check("input[name='@display'][value='si']")
    page.wait_for_function("!document.querySelector('#results .headline').textContent.includes('US gpm')")
    assert link.get_attribute("href") == "/demo/hydroxide_membrane_wash/plan"
    page.fill("#f-cycle-downtime", "80 min")  # edited: the plan would not be of what is shown
    page.click("#calculate")
    page.wait_for_function("!document.querySelector('[data-testid=plan-link] a')")
    assert "Save the scenario" in page.inner_text("[data-testid=plan-link]")
    clean(page)


def test_a_validation_error_is_shown_at_the_field(page):
    page.goto(page.base + "/demo/iron_oxide_pigment")
    page.wait_for_selector("[data-testid=headline]")
    page.fill("#f-slurry-solids_mass_fraction-mass_fraction", "150")
    page.click("#calculate")
    error = page.locator(".field[data-path='slurry.solids_mass_fraction'] .error")
    error.wait_for(state="visible")
    assert "below 1" in error.inner_text()
    assert page.inner_text("#status") == "Please correct the marked fields."
    assert page.get_attribute("#f-slurry-solids_mass_fraction-mass_fraction", "aria-invalid") == "true"
    # a unit that does not fit
    page.fill("#f-slurry-solids_mass_fraction-mass_fraction", "12")
    page.fill("#f-cake-resistance", "2.5e11")
    page.select_option("select[name='cake.resistance@unit']", "ft/lb")
    page.fill("#f-press-chamber_thickness", "-3")
    page.click("#calculate")
    err = page.locator(".field[data-path='press.chamber_thickness'] .error")
    err.wait_for(state="visible")
    assert "at least" in err.inner_text()
    assert page.locator(".field[data-path='slurry.solids_mass_fraction'] .error").is_hidden()


def test_the_form_works_from_the_keyboard(page):
    page.goto(page.base + "/demo/gypsum_chamber_limited")
    page.wait_for_selector("[data-testid=headline]")
    page.focus("#f-press-chamber_thickness")
    page.keyboard.press("Control+A")
    page.keyboard.type("40")
    page.keyboard.press("Enter")  # Enter in a field submits the form
    wait_results(page)
    assert "40" in page.locator("[data-testid=comparison]").inner_text()
    # every visible input has a label
    unlabeled = page.evaluate("""() => Array.from(document.querySelectorAll('#scenario input[type=text], #scenario textarea'))
        .filter(el => !el.closest('.option[hidden]'))
        .filter(el => !document.querySelector(`label[for="${el.id}"]`)).map(el => el.name)""")
    assert unlabeled == []
    clean(page)


def test_every_demo_case_recalculates_from_its_own_form(page):
    # the form must carry every input of each demo: calculating again gives the same figures
    page.goto(page.base + "/")
    slugs = [a.get_attribute("href").rsplit("/", 1)[1] for a in page.locator(".card a[href^='/demo/']").all()]
    assert len(slugs) >= 5
    for slug in slugs:
        page.goto(page.base + f"/demo/{slug}")
        page.wait_for_selector("[data-testid=headline]")
        before = headline(page)
        page.click("#calculate")
        wait_results(page)
        assert headline(page) == before, slug
    clean(page)


def test_choosing_a_pump_feed_shows_pressure_and_flow(page):
    page.goto(page.base + "/demo/hydroxide_sludge")
    page.wait_for_selector("[data-testid=headline]")
    page.select_option("#c-feed-mode", "pump_curve")
    page.fill("#f-feed-points-pump_curve", "2, 7\n10, 6.2\n25, 4\n40, 1.5")
    page.click("#calculate")
    wait_results(page)
    titles = svg_texts(page, "#chart-filtration .ytitle, #chart-filtration .y3title, #chart-filtration .y4title")
    assert any("pressure" in t.lower() for t in titles)
    clean(page)


def test_chart_data_downloads_as_csv(page):
    page.goto(page.base + "/demo/copper_concentrate")
    page.wait_for_function("document.querySelectorAll('.chart .plot .main-svg').length >= 4")
    with page.expect_download() as info:
        page.locator("button.csv[data-chart='throughput_thickness']").click()
    text = open(info.value.path(), encoding="utf-8").read()
    assert text.splitlines()[0].startswith("series,Chamber thickness (mm),Filtrate throughput (m³/h)")
    assert len(text.splitlines()) > 50


def test_new_scenario_page_and_static_assets_load_locally(page):
    page.goto(page.base + "/scenario/new")
    page.click("#calculate")
    page.locator(".error:not([hidden])").first.wait_for(state="visible")
    shown = page.locator(".error:not([hidden])").all_inner_texts()
    assert len(shown) >= 3 and all("required" in t or "give" in t for t in shown), shown
    assert page.watch.bad_responses == []


def test_results_are_marked_out_of_date_after_an_edit_and_after_a_failed_calculation(page):
    page.goto(page.base + "/demo/iron_oxide_pigment")
    results = page.locator("#results")
    assert "stale" not in (results.get_attribute("class") or "")
    page.fill("#f-cycle-downtime", "80")  # an edit, not yet calculated
    assert "stale" in results.get_attribute("class")
    assert "press Calculate" in page.inner_text("#stale-note")
    page.click("#calculate")
    wait_results(page)
    assert "stale" not in results.get_attribute("class")
    page.fill("#f-press-chamber_thickness", "-5")
    page.click("#calculate")
    page.locator(".field .error:not([hidden])").first.wait_for()
    assert "stale" in results.get_attribute("class")
    assert "do not calculate" in page.inner_text("#stale-note")
    page.watch.bad_responses.clear()  # the 422 above was the point


def test_save_after_an_edit_calculates_first_and_stores_what_is_shown(page):
    page.goto(page.base + "/demo/iron_oxide_pigment")
    before = headline(page)
    page.fill("#f-cycle-downtime", "80")
    page.fill("#save-name", "pigment, 80 min downtime")
    page.click("#save")
    page.wait_for_url(re.compile(r"/s/[A-Za-z0-9_-]+$"), timeout=20000)
    saved = headline(page)
    assert saved != before  # the edited inputs' results, calculated before saving
    assert "80" in page.inner_text("body")
    clean(page)


def test_the_membrane_demo_squeezes_to_its_moisture_spec_and_says_when_none_can(page):
    page.goto(page.base + "/demo/hydroxide_membrane_wash")
    page.wait_for_selector("[data-testid=whole-cycle]")
    page.wait_for_function("document.querySelectorAll('#chart-washing .main-svg').length >= 1")
    figs = headline(page)
    assert figs["moisture"].startswith("34") and "min" in figs["squeeze_time"]
    assert "sets the best cycle" in page.inner_text("[data-testid=specs]")
    # a moisture below the squeezed cake's equilibrium: no cycle can meet it
    page.fill("#f-cycle-specs-max_moisture", "25")
    page.click("#calculate")
    wait_results(page)
    assert "not met" in page.inner_text("[data-testid=specs]")
    assert page.get_by_text("No cycle meets the moisture specification").is_visible()
    clean(page)
