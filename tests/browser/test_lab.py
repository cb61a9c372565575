"""The lab test page in a real browser: paste readings, fit, carry the result into a scenario."""

from pathlib import Path

import pytest

from tests.browser.test_editor import clean

pytestmark = [pytest.mark.browser, pytest.mark.slow]
DATA = Path(__file__).resolve().parents[1] / "data"


def fill_test(block, name, pressure, csv):
    block.locator('[data-name="name"]').fill(name)
    block.locator('[data-name="pressure"]').fill(pressure)
    block.locator('[data-unit="pressure"]').select_option("kPa")
    block.locator('[data-name="area"]').fill("439")
    block.locator('[data-name="viscosity"]').fill("0.8937")
    block.locator('[data-name="c"]').fill("23.47")
    block.locator('[data-name="csv"]').fill(csv)


@pytest.mark.reference
def test_fit_two_pressures_and_open_a_scenario_with_the_result(page):
    # Geankoplis (3rd ed.) Example 14.2-1 (338 kPa) and Problem 14.2-1 (46.2 kPa); see tests/data/README.md.
    page.goto(page.base + "/lab")
    blocks = page.locator("#tests > fieldset")
    fill_test(blocks.nth(0), "Example 14.2-1", "338", (DATA / "geankoplis_14_2_1.csv").read_text())
    page.click("#add-test")
    fill_test(blocks.nth(1), "Problem 14.2-1", "46.2", (DATA / "geankoplis_p14_2_1.csv").read_text())
    # the book's evaluation: the classic t/V line on the total basis, alpha reported at 1 bar
    page.select_option("#model", "classic")
    page.select_option("#pressure-basis", "total")
    page.fill("#ref-p", "1")
    page.select_option("#ref-p-unit", "bar")
    page.click("#fit")
    page.wait_for_selector("[data-testid=lab-results]")
    table = page.locator("[data-testid=lab-tests]").inner_text()
    assert "readings 2 to 10 of 10" in table
    assert "1.85×10¹¹" in table or "1.86×10¹¹" in table  # alpha at 338 kPa within 1 % of 1.863e11
    page.wait_for_function("document.querySelectorAll('.chart .plot .main-svg').length >= 3")
    page.click("#use-in-scenario")
    page.wait_for_url(lambda url: "/scenario/new" in url and "prefill=" in url)
    assert page.input_value("#f-cake-resistance").startswith("1.3")  # alpha_ref at 1 bar, about 1.35e11
    assert page.locator("select[name='cake.reference_pressure@unit']").input_value() == "bar"
    assert page.input_value("#f-cake-compressibility").startswith("0.2")
    assert page.input_value("#f-medium_resistance_stderr") != ""  # the pooled R_m's standard error
    clean(page)


def test_a_bad_csv_row_is_shown_at_the_readings(page):
    page.goto(page.base + "/lab")
    block = page.locator("#tests > fieldset").nth(0)
    fill_test(block, "bad", "338", "time [s], filtrate [L]\n4.4, 0.498\n9.5, x\n16.3, 1.5\n")
    page.click("#fit")
    err = block.locator(".field[data-path='csv'] .error")
    err.wait_for(state="visible")
    assert "line 3" in err.inner_text()


def test_a_compression_permeability_table_draws_both_laws(page):
    # synthetic table from alpha = 5e10 (1 + p/20 kPa)^0.7, eps_s = 0.25 (1 + p/20 kPa)^0.12 (derived here)
    rows = "\n".join(f"{p}, {5e10 * (1 + p / 20) ** 0.7:.6g}, {0.25 * (1 + p / 20) ** 0.12:.6g}"
                     for p in (5, 10, 25, 50, 100, 250, 500, 1000))
    page.goto(page.base + "/lab")
    page.fill("#compression-csv", "stress [kPa], alpha [m/kg], solidosity [-]\n" + rows)
    page.click("#fit-compression")
    page.wait_for_selector("[data-testid=local-laws]")
    assert "0.7" in page.locator("[data-testid=local-laws]").inner_text()
    page.wait_for_function("document.querySelectorAll('#compression-results .chart .plot .main-svg').length >= 2")
    clean(page)


def test_readings_to_fit_are_read_as_first_and_last_or_sent_as_typed(page):
    # the page counts from 1, the API from 0
    page.goto(page.base + "/lab")
    field = page.locator("#tests > fieldset").nth(0).locator('[data-name="use"]')
    sent = {}
    for typed in ("2, 9", "2 9", "2-9", "2–9", "2 to 9", "first 2"):
        field.fill(typed)
        sent[typed] = page.evaluate("window.presscycleLab.collect().tests[0].use")
    assert sent == {"2, 9": [1, 8], "2 9": [1, 8], "2-9": [1, 8], "2–9": [1, 8], "2 to 9": [1, 8],
                    "first 2": "first 2"}


def test_readings_to_fit_the_server_cannot_read_are_said_at_the_field(page):
    page.goto(page.base + "/lab")
    block = page.locator("#tests > fieldset").nth(0)
    fill_test(block, "Example 14.2-1", "338", (DATA / "geankoplis_14_2_1.csv").read_text())
    block.locator('[data-name="use"]').fill("2 until 9")
    page.click("#fit")
    err = block.locator(".field[data-path='use'] .error")
    err.wait_for(state="visible")
    assert "e.g. 1, 5" in err.inner_text() and "required" not in err.inner_text()


def test_a_unit_typed_in_a_field_is_shown_by_its_menu_and_flagged_by_its_true_factor(page):
    # "2.5 m^2" typed beside a menu still saying cm², and a flag saying "a factor of 100" of a
    # value 50 times the usual top (a plant-engineer check)
    page.goto(page.base + "/lab")
    block = page.locator("#tests > fieldset").nth(0)
    fill_test(block, "Example 14.2-1", "338", (DATA / "geankoplis_14_2_1.csv").read_text())
    area, menu = block.locator('[data-name="area"]'), block.locator('[data-unit="area"]')
    assert menu.input_value() == "cm^2" and not menu.is_disabled()
    for typed in ("2.5 m^2", "2.5 m²", "2.5 m2"):
        area.fill(typed)
        # the menu shows the unit typed, and takes no other choice while it is typed
        assert menu.input_value() == "m^2" and menu.is_disabled(), typed
        assert page.evaluate("window.presscycleLab.collect().tests[0].area") == typed
    page.click("#fit")
    flag = page.locator("[data-testid=lab-input-warning]")
    flag.wait_for(state="visible")
    assert "2.5 m² is outside the usual 0.001–0.05 m²" in flag.inner_text()
    assert "It is 50 times too large for the usual range: check the unit." in flag.inner_text()
    # the unit cleared: the number keeps the unit it had (the menu stays at m², free again)
    area.fill("2.5")
    assert menu.input_value() == "m^2" and not menu.is_disabled()
    assert page.evaluate("window.presscycleLab.collect().tests[0].area") == "2.5 m^2"
    # a unit the menu does not list is shown as typed; cleared, the menu's own choice comes back
    menu.select_option("cm^2")
    area.fill("250 dm^2")
    assert menu.input_value() == "dm^2" and menu.is_disabled()
    assert menu.locator("option:checked").inner_text() == "dm^2"
    area.fill("439")
    assert menu.input_value() == "cm^2" and not menu.is_disabled()
    assert menu.locator("option[value='dm^2']").count() == 0
    assert page.evaluate("window.presscycleLab.collect().tests[0].area") == "439 cm^2"
    # the same on the squeeze test and the reference pressure, and on a test added later
    page.fill("#squeeze [data-name=area]", "50 m^2")
    assert page.locator("#squeeze [data-unit=area]").input_value() == "m^2"
    page.fill("#ref-p", "1 atm")
    assert page.locator("#ref-p-unit").input_value() == "atm"
    page.click("#add-test")
    second = page.locator("#tests > fieldset").nth(1)
    second.locator('[data-name="pressure"]').fill("46.2 kPa")
    assert second.locator('[data-unit="pressure"]').input_value() == "kPa"
    clean(page)


def test_the_dry_cake_mass_has_a_unit_menu(page):
    # the field had no menu and "12" went as 12 kg (the API's bare mass), whatever "g" was meant
    page.goto(page.base + "/lab")
    block = page.locator("#tests > fieldset").nth(0)
    assert block.locator('[data-unit="dry_cake_mass"]').input_value() == "g"
    block.locator('[data-name="dry_cake_mass"]').fill("12")
    assert page.evaluate("window.presscycleLab.collect().tests[0].dry_cake_mass") == "12 g"
