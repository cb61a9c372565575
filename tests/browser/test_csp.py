"""The pages work under their real Content-Security-Policy (no bypass): no violation is logged,
the charts draw, Calculate works. The other browser tests bypass the CSP only because
playwright evaluates their predicates as strings."""

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]


@pytest.fixture
def strict_page(browser, live_server):
    context = browser.new_context(viewport={"width": 1280, "height": 900})
    pg = context.new_page()
    errors = []
    pg.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda e: errors.append(str(e)))
    pg.errors, pg.base = errors, live_server
    yield pg
    context.close()


def test_editor_draws_and_calculates_under_the_csp(strict_page):
    pg = strict_page
    pg.goto(pg.base + "/demo/copper_concentrate")
    pg.locator(".js-plotly-plot").first.wait_for()
    assert pg.locator(".js-plotly-plot").count() == 4
    pg.fill("#f-cycle-downtime", "45")
    pg.click("#calculate")
    pg.locator("#status", has_text="Done.").wait_for()
    assert pg.locator(".js-plotly-plot").count() == 4
    assert pg.errors == []


@pytest.mark.parametrize("path", ["/", "/lab", "/scenarios", "/api", "/scenario/new"])
def test_other_pages_log_no_violation(strict_page, path):
    pg = strict_page
    pg.goto(pg.base + path)
    pg.wait_for_load_state("networkidle")
    assert pg.errors == []


def test_saved_page_and_its_print_button_work_under_the_csp(strict_page):
    import json

    import httpx

    from server.settings import PROJECT_ROOT

    pg = strict_page
    inputs = json.loads((PROJECT_ROOT / "demo_cases" / "gypsum_chamber_limited.json").read_text())["inputs"]
    link = httpx.post(pg.base + "/api/v1/scenarios", json={"name": "csp", "inputs": inputs}).json()["link"]
    pg.goto(pg.base + link)
    pg.locator(".js-plotly-plot").first.wait_for()
    pg.click("#print-report")  # headless print returns at once
    assert pg.errors == []


def test_an_inline_script_would_be_refused_and_seen(strict_page):
    # the check itself: an inline script on one of our pages is refused, and the refusal is
    # logged as an error these tests see
    from playwright.sync_api import Error

    pg = strict_page
    pg.goto(pg.base + "/lab")
    with pytest.raises(Error, match="Content Security Policy"):
        pg.add_script_tag(content="document.body.dataset.ran = 'yes';")
    assert pg.get_attribute("body", "data-ran") is None
    assert any("Content Security Policy" in e for e in pg.errors)


def test_press_log_page_fits_and_draws_under_the_csp(strict_page):
    import httpx

    from tests.synthetic_logs import synthetic_log, to_csv
    from tests.test_api_presslog import SCENARIO

    pg = strict_page
    sid = httpx.post(pg.base + "/api/v1/scenarios", json={"name": "csp log", "inputs": SCENARIO}).json()["id"]
    pg.goto(pg.base + f"/press-log?scenario={sid}")
    pg.set_input_files("#f-file", files=[{"name": "log.csv", "mimeType": "text/csv",
                                          "buffer": to_csv(synthetic_log(cycles=8)).encode()}])
    pg.locator("#file-info", has_text="read").wait_for()
    pg.click("#analyse")
    pg.locator("#status", has_text="Done").wait_for()
    pg.locator(".js-plotly-plot").nth(4).wait_for()
    assert pg.errors == []
