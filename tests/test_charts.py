"""Chart figures (server/charts.py): axis titles with units, finite data, both unit systems.

The figures only draw solver series; what the series hold is tested in
tests/solver/test_sweeps.py.
"""

import json
import math
import re

import numpy as np
import pytest

from server.charts import figures, overlay
from server.display import DISPLAY, Units
from server.scenarios import solve_inputs
from tests.test_pages import DEMOS

UNIT_LABELS = {shown.label for per_system in DISPLAY.values() for shown in per_system.values()}


@pytest.fixture(scope="module")
def solved_demos():
    return {d.slug: solve_inputs(d.inputs) for d in DEMOS}


def axes_of(layout: dict) -> dict:
    return {k: v for k, v in layout.items() if re.fullmatch(r"[xy]axis\d*", k)}


def numbers_in(trace: dict):
    for key in ("x", "y", "z"):
        values = trace.get(key, [])
        for v in values:
            yield from (v if isinstance(v, list) else [v])


def assert_readable(fig: dict, name: str):
    axes = axes_of(fig["layout"])
    assert {"xaxis", "yaxis"} <= set(axes), name
    for key, axis in axes.items():
        title = axis["title"]["text"]
        unit = re.search(r"\(([^()]+)\)[^()]*$", title)
        assert unit and unit.group(1) in UNIT_LABELS, f"{name}.{key}: {title!r} has no display unit"
    assert fig["data"], name
    for trace in fig["data"]:
        values = list(numbers_in(trace))
        assert values, (name, trace.get("name"))
        assert all(isinstance(v, int | float) and math.isfinite(v) for v in values), (name, trace.get("name"))


@pytest.mark.parametrize("system", ["si", "us"])
@pytest.mark.parametrize("slug", [d.slug for d in DEMOS])
def test_every_figure_has_axis_titles_with_units_and_finite_data(solved_demos, slug, system):
    results = solved_demos[slug]
    figs = figures(results["chart_series"], results, Units(system))
    assert set(figs) == {"throughput_time", "throughput_thickness", "throughput_map", "filtration"}
    for name, fig in figs.items():
        assert_readable(fig, name)


def test_us_units_change_the_axis_titles_and_the_numbers(solved_demos):
    results = solved_demos["copper_concentrate"]
    si = figures(results["chart_series"], results, Units("si"))["throughput_time"]
    us = figures(results["chart_series"], results, Units("us"))["throughput_time"]
    assert "m³/h" in si["layout"]["yaxis"]["title"]["text"]
    assert "US gpm" in us["layout"]["yaxis"]["title"]["text"]
    # 1 m³/h = 4.402868 US gpm (US gallon = 231 in³ exactly: NIST Handbook 44, Appendix C)
    ratio = us["data"][0]["y"][10] / si["data"][0]["y"][10]
    assert ratio == pytest.approx(1 / (231 * 0.0254**3 * 60), rel=1e-9)


def test_pressure_and_flow_are_drawn_only_where_the_feed_pressure_varies(solved_demos):
    constant = figures(solved_demos["copper_concentrate"]["chart_series"], solved_demos["copper_concentrate"],
                       Units())["filtration"]
    pumped = figures(solved_demos["kaolin_pump_fed"]["chart_series"], solved_demos["kaolin_pump_fed"],
                     Units())["filtration"]
    assert "yaxis3" not in constant["layout"] and "yaxis3" in pumped["layout"]
    assert {t["name"] for t in pumped["data"]} >= {"feed pressure", "filtrate flow"}


def test_series_saved_before_the_feed_named_its_pressure_still_draw(solved_demos):
    # scenarios saved by earlier versions hold "pump_fed" where the series now say "pressure_varies"
    results = solved_demos["kaolin_pump_fed"]
    old = dict(results["chart_series"])
    old["pump_fed"] = old.pop("pressure_varies")
    fig = figures(old, results, Units())["filtration"]
    assert "yaxis3" in fig["layout"]


def test_the_overlay_escapes_names_and_draws_each_scenario(solved_demos):
    pair = [("<b>A</b>", solved_demos["copper_concentrate"]), ("B", solved_demos["gypsum_chamber_limited"])]
    figs = overlay(pair, Units())
    for name, fig in figs.items():
        assert_readable(fig, name)
        names = [t["name"] for t in fig["data"]]
        assert "&lt;b&gt;A&lt;/b&gt;" in names and "B" in names and "<b>A</b>" not in names


def test_page_figures_keep_six_significant_figures_and_their_shape(solved_demos):
    from server.charts import compact

    results = solved_demos["kaolin_pump_fed"]
    full = figures(results["chart_series"], results, Units())
    small = compact(full)
    for key in full:
        for a, b in zip(full[key]["data"], small[key]["data"]):
            for axis in ("x", "y", "z"):
                if axis in a:
                    fa, fb = np.asarray(a[axis], dtype=float), np.asarray(b[axis], dtype=float)
                    assert fa.shape == fb.shape
                    top = np.abs(fa).max()
                    assert np.all(np.abs(fa - fb) <= 0.5e-5 * top * (1 + 1e-9)), (key, axis)
    assert len(json.dumps(small)) < 0.7 * len(json.dumps(full))


def test_page_json_cannot_end_its_script_block():
    from server.views import page_json

    text = str(page_json({"name": "</script><script>alert(1)</script>", "note": "a & b 'c'"}))
    assert "</script>" not in text and "<" not in text and "&" not in text and "'" not in text
    assert json.loads(text) == {"name": "</script><script>alert(1)</script>", "note": "a & b 'c'"}
