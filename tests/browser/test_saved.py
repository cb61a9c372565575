"""Saving and sharing scenarios in a real browser."""

import pytest

from tests.browser.test_editor import clean, headline, wait_results

pytestmark = [pytest.mark.browser, pytest.mark.slow]


def test_save_open_the_link_elsewhere_then_edit_a_copy(page, browser):
    page.goto(page.base + "/demo/iron_oxide_pigment")
    page.wait_for_selector("[data-testid=headline]")
    page.fill("#f-press-chamber_thickness", "20")
    page.click("#calculate")
    wait_results(page)
    figures = headline(page)
    page.fill("#save-name", "Pigment press, 20 mm chambers")
    page.fill("#save-note", "for the capex meeting")
    page.click("#save")
    page.wait_for_url("**/s/*")
    link = page.url
    assert page.locator("[data-testid=scenario-name]").inner_text() == "Pigment press, 20 mm chambers"
    assert headline(page) == figures

    # the printable report: inputs, results, charts and cautions; no buttons
    page.emulate_media(media="print")
    assert page.locator(".saved-actions").is_hidden()
    assert page.locator("[data-testid=headline]").is_visible()
    assert page.locator("[data-testid=inputs]").is_visible()
    assert page.locator(".caution").is_visible()
    assert page.locator(".chart .plot").first.is_visible()
    page.emulate_media(media="screen")

    # a colleague opens the link in a fresh browser context
    other = browser.new_context()
    colleague = other.new_page()
    colleague.goto(link)
    colleague.wait_for_selector("[data-testid=headline]")
    assert headline(colleague) == figures
    colleague.wait_for_function("document.querySelectorAll('.chart .plot .main-svg').length >= 4")
    other.close()

    # edit a copy, change it, save: a new scenario with the original as parent
    page.click("text=Edit a copy")
    page.wait_for_selector("#scenario")
    page.fill("#f-press-chamber_thickness", "32")
    page.click("#calculate")
    wait_results(page)
    page.fill("#save-name", "Pigment press, 32 mm chambers")
    page.click("#save")
    page.wait_for_function(f"location.href !== {link!r} && location.pathname.startsWith('/s/')")
    assert "copied from" in page.locator(".saved-head").inner_text()
    assert headline(page) != figures

    # the original is unchanged
    page.goto(link)
    assert headline(page) == figures
    assert page.locator("[data-testid=scenario-name]").inner_text() == "Pigment press, 20 mm chambers"
    clean(page)


def test_compare_two_saved_scenarios(page):
    ids = []
    for L in ("25", "40"):
        page.goto(page.base + "/demo/copper_concentrate")
        page.wait_for_selector("[data-testid=headline]")
        page.fill("#f-press-chamber_thickness", L)
        page.fill("#save-name", f"copper {L} mm")
        page.click("#save")
        page.wait_for_url("**/s/*")
        ids.append(page.url.rsplit("/", 1)[1])
    page.goto(page.base + "/scenarios")
    for sid in ids:
        page.check(f"input[name=pick][value='{sid}']")
    page.click("text=Compare ticked")
    page.wait_for_url("**/compare?ids=*")
    page.wait_for_function("document.querySelectorAll('.chart .plot .main-svg').length >= 2")
    assert page.locator("tr.differs").count() >= 1
    assert "copper 25 mm" in page.locator("[data-testid=compare-figures]").inner_text()
    clean(page)
