"""Readable on any screen and on paper (issue 10): no horizontal page scroll, no chart label
over another or cut off, full-width charts and no controls in print.

Screenshots of every page at 1280, 1024 and 390 px are written under the test run's temporary
folder (``screenshots*``), for a person to look at.
"""

import json
from pathlib import Path

import httpx
import pytest

from tests.browser.test_editor import clean
from tests.browser.test_lab import DATA, fill_test

pytestmark = [pytest.mark.browser, pytest.mark.slow]
DEMOS = Path(__file__).resolve().parents[2] / "demo_cases"
#: the lab tests of tests/browser/test_lab.py (Geankoplis, see tests/data/README.md)
LAB_TESTS = [("Example 14.2-1", "338", "geankoplis_14_2_1.csv"), ("Problem 14.2-1", "46.2", "geankoplis_p14_2_1.csv")]

# Every label plotly drew in a chart, with its box in page pixels. Labels of one kind (one
# axis's ticks, the legend, the colour bar) are laid out by plotly among themselves; the test
# looks for labels of different kinds that cover each other, and for labels outside the chart.
LABELS_JS = """(gd) => {
  const out = [];
  const add = (kind, e) => {
    const r = e.getBoundingClientRect();
    if (r.width > 0 && r.height > 0 && e.textContent.trim() !== "")
      out.push({kind, text: e.textContent, l: r.left, r: r.right, t: r.top, b: r.bottom});
  };
  gd.querySelectorAll(".legend .legendtext").forEach((e) => add("legend", e));
  gd.querySelectorAll(".infolayer text").forEach((e) => {
    const c = e.getAttribute("class") || "";
    if (/^[xy]\\d*title$/.test(c)) add("title " + c, e);
  });
  gd.querySelectorAll(".colorbar text").forEach((e) => add("colorbar", e));
  gd.querySelectorAll(".updatemenu-button text").forEach((e) => add("buttons", e));
  gd.querySelectorAll(".cartesianlayer .subplot").forEach((sp) => {
    const name = sp.getAttribute("class").replace("subplot", "").trim();
    ["x", "y"].forEach((letter) =>
      sp.querySelectorAll(`.${letter}axislayer-above text`).forEach((e) => add(`ticks ${name} ${letter}`, e)));
  });
  const f = gd.getBoundingClientRect();
  return {labels: out, frame: {l: f.left, r: f.right, t: f.top, b: f.bottom}};
}"""


def label_problems(page) -> list[str]:
    """Labels of different kinds that overlap, and labels outside their chart, on every chart."""
    problems = []
    for i, gd in enumerate(page.locator(".js-plotly-plot").all()):
        if not gd.is_visible():
            continue
        drawn = gd.evaluate(LABELS_JS)
        labels, f = drawn["labels"], drawn["frame"]
        name = gd.get_attribute("id") or f"chart {i}"
        for a in labels:
            if a["l"] < f["l"] - 1 or a["r"] > f["r"] + 1 or a["t"] < f["t"] - 1 or a["b"] > f["b"] + 1:
                problems.append(f"{name}: {a['kind']} {a['text']!r} cut off at the chart's edge")
        for j, a in enumerate(labels):
            for b in labels[j + 1:]:
                if a["kind"] == b["kind"]:
                    continue
                dx = min(a["r"], b["r"]) - max(a["l"], b["l"])
                dy = min(a["b"], b["b"]) - max(a["t"], b["t"])
                if dx > 1 and dy > 1:
                    problems.append(f"{name}: {a['kind']} {a['text']!r} overlaps {b['kind']} {b['text']!r}")
    return problems


def page_width(page) -> tuple[int, int]:
    return page.evaluate("[document.documentElement.scrollWidth, document.documentElement.clientWidth]")


def wait_charts(page, n: int):
    page.wait_for_function(f"document.querySelectorAll('.chart .plot .main-svg').length >= {n}")
    # drawn at their container's width (static/js/charts.js redraws on a change of width)
    page.wait_for_function("""[...document.querySelectorAll('.js-plotly-plot')].every(
        (g) => g._fullLayout && Math.abs(g._fullLayout.width - g.clientWidth) < 2)""")


@pytest.fixture(scope="module")
def saved_ids(live_server):
    ids = []
    for slug in ("kaolin_pump_fed", "gypsum_chamber_limited"):
        inputs = json.loads((DEMOS / f"{slug}.json").read_text())
        r = httpx.post(live_server + "/api/v1/scenarios", timeout=60,
                       json={"name": f"{slug.replace('_', ' ')} for the layout tests", "inputs": inputs.get("inputs", inputs)})
        assert r.status_code in (200, 201), r.text
        ids.append(r.json()["id"])
    return ids


def open_page(page, kind: str, saved_ids) -> int:
    """Open one of the pages with its charts drawn; the number of charts."""
    if kind == "editor":
        page.goto(page.base + "/demo/kaolin_pump_fed")
        n = 4
    elif kind == "saved":
        page.goto(page.base + f"/s/{saved_ids[1]}")
        n = 4
    elif kind == "list":
        page.goto(page.base + "/scenarios")
        n = 0
    elif kind == "compare":
        page.goto(page.base + f"/compare?ids={','.join(saved_ids)}")
        n = 2
    elif kind == "presslog":
        from tests.synthetic_logs import synthetic_log, to_csv

        page.goto(page.base + f"/press-log?scenario={saved_ids[0]}")
        page.set_input_files("#f-file", files=[{"name": "log.csv", "mimeType": "text/csv",
                                                "buffer": to_csv(synthetic_log(cycles=20, seed=3)).encode()}])
        page.wait_for_function("document.getElementById('file-info').textContent.includes('read')")
        page.click("#analyse")
        page.wait_for_selector("[data-testid=presslog-results]")
        n = 5
    else:
        page.goto(page.base + "/lab")
        for i, (name, kPa, readings) in enumerate(LAB_TESTS):
            if i:
                page.click("#add-test")
            fill_test(page.locator("#tests > fieldset").nth(i), name, kPa, (DATA / readings).read_text())
        page.click("#fit")
        page.wait_for_selector("[data-testid=lab-results]")
        # and the squeeze test below it (tests/data/squeeze_demo.csv, invented): two charts more
        squeeze = page.locator("#squeeze")
        for name, value in (("pressure", "6"), ("dry_solids_mass", "58"), ("solids_density", "2650"),
                            ("area", "50")):
            squeeze.locator(f'input[data-name="{name}"]').fill(value)
        squeeze.locator('[data-unit="area"]').select_option("cm^2")
        squeeze.locator('[data-name="csv"]').fill((DATA / "squeeze_demo.csv").read_text())
        page.click("#fit-squeeze")
        page.wait_for_selector("[data-testid=squeeze-results]")
        n = 5
    wait_charts(page, n)
    return n


PAGES = ["editor", "saved", "compare", "lab", "list", "presslog"]


@pytest.fixture(scope="module")
def shots(tmp_path_factory):
    return tmp_path_factory.mktemp("screenshots")


@pytest.mark.parametrize("width", [1280, 1024, 390, 360])
def test_no_horizontal_scroll_and_no_chart_label_over_another(page, saved_ids, shots, width):
    page.set_viewport_size({"width": width, "height": 900})
    for kind in PAGES:
        open_page(page, kind, saved_ids)
        if width != 360:
            page.screenshot(path=str(shots / f"{kind}_{width}.png"), full_page=True)
        scroll, viewport = page_width(page)
        assert scroll <= viewport, f"{kind} at {width} px: the page is {scroll} px wide"
        # every table fits or scrolls inside its own box
        for t in page.locator("table").all():
            box = t.evaluate("(t) => { const s = t.closest('.table-scroll'); return s ? s.getBoundingClientRect().right : t.getBoundingClientRect().right; }")
            assert box <= viewport + 0.5, f"{kind} at {width} px: a table runs past the page"
        # a note under a row of a wide table is read without scrolling sideways (a plant-engineer
        # check found the lab's per-test notes cut off at 390 px)
        for past in page.evaluate("() => [...document.querySelectorAll('.row-note > div')].map((d) => "
                                  "d.getBoundingClientRect().right - Math.min(window.innerWidth, "
                                  "d.closest('.table-scroll').getBoundingClientRect().right))"):
            assert past <= 0.5, f"{kind} at {width} px: a row note runs {past:.0f} px past its table's box"
        assert label_problems(page) == [], f"{kind} at {width} px"
    clean(page)


@pytest.mark.parametrize("kind", ["demo", "saved"])
@pytest.mark.parametrize("width", [1280, 390])
def test_a_phone_wide_chart_has_no_tool_bar_over_its_legend(page, saved_ids, width, kind):
    # plotly's tool bar sat over the press log's legend row at 390 px (a plant-engineer check): on
    # a phone-wide screen charts are drawn without it (a finger zooms and pans); on a desktop they
    # keep it, also two side by side, each narrower than a phone (the saved page at 1280 px: a review)
    page.set_viewport_size({"width": width, "height": 900})
    if kind == "demo":
        page.goto(page.base + "/demo/copper_concentrate")
        wait_charts(page, 4)
    else:
        open_page(page, "saved", saved_ids)
        if width == 1280:  # two charts side by side, each narrower than 600 px
            assert page.evaluate("() => document.querySelector('.js-plotly-plot').clientWidth") < 600
    chart = page.locator(".js-plotly-plot").first
    chart.scroll_into_view_if_needed()
    chart.hover()  # plotly builds its tool bar when the pointer first comes over a chart
    page.wait_for_timeout(300)
    assert chart.locator(".modebar").count() == (0 if width == 390 else 1)
    clean(page)


@pytest.mark.parametrize("kind,width", [("saved", 1280), ("editor", 1024), ("compare", 390), ("lab", 1024)])
def test_print_shows_full_width_charts_and_no_controls(page, saved_ids, shots, kind, width):
    page.set_viewport_size({"width": width, "height": 900})
    open_page(page, kind, saved_ids)
    on_screen = page.evaluate("document.querySelector('.js-plotly-plot')._fullLayout.width")
    page.emulate_media(media="print")
    wait_charts(page, 1)
    page.screenshot(path=str(shots / f"{kind}_{width}_print.png"), full_page=True)
    # each chart as wide as the printed content (the report's column), not the screen's grid cell
    content = page.evaluate("(() => { const m = document.querySelector('main'); const s = getComputedStyle(m);"
                            " return m.clientWidth - parseFloat(s.paddingLeft) - parseFloat(s.paddingRight); })()")
    widths = page.evaluate("[...document.querySelectorAll('.js-plotly-plot')].map((g) => g._fullLayout.width)")
    assert widths and all(w >= 0.95 * content - 20 for w in widths), (widths, content)
    if kind in ("editor", "saved", "lab") and width >= 1024:
        assert widths[0] > 1.4 * on_screen  # two charts to a row (or beside the form) on screen
    for selector in ("button", "a.button", ".units-switch", "form.scenario", ".saved-actions", ".updatemenu-container",
                     ".modebar-container", "select", "input"):
        for el in page.locator(selector).all():
            assert not el.is_visible(), f"{selector} shows in print on the {kind} page"
    assert page.locator(".caution").first.is_visible()
    assert label_problems(page) == [], f"{kind} printed"
    # back on screen, the charts return to their places
    page.emulate_media(media="screen")
    wait_charts(page, 1)
    assert page.evaluate("document.querySelector('.js-plotly-plot')._fullLayout.width") == pytest.approx(on_screen, abs=2)
    clean(page)
