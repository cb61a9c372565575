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
#: dimensionless axes of the washing chart: per cent, and the wash ratio counted in pore volumes
UNIT_LABELS |= {"%", "% of initial", "cake pore volumes"}


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
    washes = results["best"]["solute_removal"] is not None  # a wash model: the washing chart too
    assert set(figs) == {"throughput_time", "throughput_thickness", "throughput_map", "filtration"} | (
        {"washing"} if washes else set())
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


# ---- readable on any screen: legend, margins, ticks (issue 10) --------------------------------


def all_figures(solved_demos, system="si"):
    """Every figure the pages draw from the demo cases: results, compare overlay."""
    for slug, results in solved_demos.items():
        for key, fig in figures(results["chart_series"], results, Units(system)).items():
            yield f"{slug}.{key}", fig
    pair = [("copper", solved_demos["copper_concentrate"]), ("kaolin", solved_demos["kaolin_pump_fed"])]
    for key, fig in overlay(pair, Units(system)).items():
        yield f"overlay.{key}", fig


@pytest.fixture(scope="module")
def lab_figs(client):
    from tests.test_api_labfit import EXAMPLE, PROBLEM

    r = client.post("/ui/lab-fit", json={"tests": [EXAMPLE, PROBLEM]})
    assert r.status_code == 200, r.text
    return r.json()["figures"]


def shown_ticks(axis: dict) -> list[float]:
    """The tick values of an axis with linear ticks set here, over its range."""
    lo, hi = axis["range"]
    n = int(math.floor((hi - axis["tick0"]) / axis["dtick"] + 1e-9))
    return [axis["tick0"] + k * axis["dtick"] for k in range(n + 1) if axis["tick0"] + k * axis["dtick"] >= lo]


def is_nice(step: float) -> bool:
    mantissa = step / 10 ** math.floor(math.log10(step))
    return any(math.isclose(mantissa, m, rel_tol=1e-9) for m in (1, 2, 2.5, 5))


@pytest.mark.parametrize("system", ["si", "us"])
def test_the_legend_is_a_row_above_the_plot_and_every_axis_makes_room_for_its_labels(solved_demos, lab_figs, system):
    figs = list(all_figures(solved_demos, system)) + list(lab_figs.items())
    for name, fig in figs:
        legend = fig["layout"]["legend"]
        # above the plot area (paper y above 1, anchored at its bottom): never over the x axis title
        assert legend["orientation"] == "h" and legend["yanchor"] == "bottom" and legend["y"] >= 1.0, name
        for key, axis in axes_of(fig["layout"]).items():
            assert axis["automargin"] is True, (name, key)
            # numbers in powers of ten, never SI letters ("1.8T" for 1.8e12 m/kg, "2m" for 0.002)
            assert axis["exponentformat"] in ("power", "e"), (name, key)


@pytest.mark.parametrize("system", ["si", "us"])
def test_right_hand_axes_tick_in_nice_steps_on_the_left_axis_grid(solved_demos, system):
    checked = 0
    for name, fig in all_figures(solved_demos, system):
        layout = fig["layout"]
        for key, axis in axes_of(layout).items():
            if "overlaying" not in axis:
                continue
            left = layout["yaxis" + axis["overlaying"][1:]]
            for a in (axis, left):
                assert a["tickmode"] == "linear" and a["tick0"] == 0 and is_nice(a["dtick"]), (name, key, a)
                assert a["range"][0] == 0
            # the same number of intervals over the same share of the range: ticks on shared grid lines
            assert len(shown_ticks(axis)) == len(shown_ticks(left)) >= 5, (name, key)
            assert axis["range"][1] / axis["dtick"] == pytest.approx(left["range"][1] / left["dtick"], rel=1e-12)
            checked += 1
    assert checked >= 2 * len(solved_demos)  # the thickness and the filtration charts at least


def test_the_right_hand_ranges_hold_every_value_drawn(solved_demos):
    for name, fig in all_figures(solved_demos):
        layout = fig["layout"]
        for trace in fig["data"]:
            axis = layout.get("yaxis" + trace.get("yaxis", "y")[1:], {})
            if "range" in axis and trace["type"] == "scatter":
                assert max(trace["y"]) <= axis["range"][1] and min(trace["y"]) >= axis["range"][0], (name, trace["name"])


def test_percent_axes_stop_at_100(solved_demos):
    percent = 0
    for name, fig in all_figures(solved_demos):
        for key, axis in axes_of(fig["layout"]).items():
            if axis["title"]["text"].endswith("(%)"):
                percent += 1
                assert max(shown_ticks(axis)) == 100, (name, key)
                assert axis["range"][1] <= 105, (name, key)
    assert percent >= len(solved_demos)


def test_the_lab_resistance_axis_is_in_powers_of_ten(lab_figs):
    axis = lab_figs["compressibility"]["layout"]["yaxis"]
    assert axis["type"] == "log" and "m/kg" in axis["title"]["text"] and axis["exponentformat"] == "power"
    # pressures over less than a decade: round ticks, at least four, written out in full
    p_axis = lab_figs["compressibility"]["layout"]["xaxis"]
    assert p_axis["type"] == "log" and p_axis["tickmode"] == "array" and p_axis["tickformat"] == ".3~g"
    assert len(p_axis["tickvals"]) >= 4


def test_log_ticks_are_round_and_at_least_four_where_the_range_allows():
    from server.labcharts import log_ticks

    # tests at 2, 3 and 5 bar (the chart's range is theirs / 1.3 to x 1.3): powers of two gave 2 and 4 only
    assert log_ticks(2 / 1.3, 5 * 1.3) == [2.0, 3.0, 4.0, 5.0]
    assert log_ticks(0.2, 20) == [0.2, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0]
    assert log_ticks(1.05, 1.2) == [1.05, 1.2]  # no round value inside: the range's ends


@pytest.mark.parametrize("slug", [d.slug for d in DEMOS])
def test_the_filtration_chart_marks_where_the_best_cycle_stops_filtering(solved_demos, slug):
    results = solved_demos[slug]
    u = Units("us")
    fig = figures(results["chart_series"], results, u)["filtration"]
    stop = [t for t in fig["data"] if t["name"].startswith("stop filtering here")]
    assert len(stop) == 1
    best = results["best"]
    assert stop[0]["x"] == [u("time", best["filtration_time"])]
    assert stop[0]["y"] == [u("volume", best["filtrate_volume"])]
    # on the filtrate curve it marks (the curve runs to full chambers, the best cycle stops there or before)
    curve = fig["data"][0]
    assert min(curve["x"]) <= stop[0]["x"][0] <= max(curve["x"]) * (1 + 1e-9)
    assert np.interp(stop[0]["x"][0], curve["x"], curve["y"]) == pytest.approx(stop[0]["y"][0], rel=1e-3)
    lines = [s for s in fig["layout"]["shapes"] if s["x0"] == s["x1"] == stop[0]["x"][0]]
    assert lines and lines[0]["yref"] == "paper" and (lines[0]["y0"], lines[0]["y1"]) == (0, 1)


def test_stacked_panels_share_one_time_axis(solved_demos):
    fig = figures(solved_demos["kaolin_pump_fed"]["chart_series"], solved_demos["kaolin_pump_fed"], Units())["filtration"]
    layout = fig["layout"]
    assert layout["xaxis2"]["matches"] == "x"
    assert layout["xaxis"].get("domain", [0, 1]) == layout["xaxis2"].get("domain", [0, 1])
    # the panels do not overlap
    top, bottom = layout["yaxis"]["domain"], layout["yaxis3"]["domain"]
    assert bottom[1] < top[0]
    assert layout["yaxis2"]["domain"] == top and layout["yaxis4"]["domain"] == bottom


@pytest.mark.parametrize("system", ["si", "us"])
def test_the_map_colour_bar_is_labelled_at_its_top(solved_demos, system):
    for slug, results in solved_demos.items():
        contour = figures(results["chart_series"], results, Units(system))["throughput_map"]["data"][0]
        z = np.asarray(contour["z"], dtype=float)
        bar = contour["colorbar"]
        assert contour["zmax"] == z.max() and contour["zmin"] == z.min()
        assert bar["tickvals"][-1] == z.max() and bar["ticktext"][-1] == f"{z.max():.3g}", slug
        assert bar["tickvals"] == sorted(bar["tickvals"]) and bar["tickvals"][0] >= z.min(), slug
        assert len(bar["tickvals"]) >= 3, slug
        # the nice ticks below the top keep clear of it (labels do not collide)
        steps = np.diff(bar["tickvals"])
        assert steps[-1] >= 0.45 * steps[0], slug


def test_the_thickness_chart_shows_the_matched_thickness_where_it_lies_on_the_chart(solved_demos):
    for slug, results in solved_demos.items():
        fig = figures(results["chart_series"], results, Units())["throughput_thickness"]
        L = fig["data"][0]["x"]
        Lm = Units()("thickness", results["derived"]["matched_chamber_thickness"])
        matched = [t for t in fig["data"] if t["name"].startswith("chambers just full")]
        if min(L) <= Lm <= max(L):
            assert len(matched) == 1 and matched[0]["x"] == [Lm, Lm], slug
        else:
            assert not matched and "off this chart" in fig["layout"]["xaxis"]["title"]["text"], slug
    # the chamber-limited demo: the recommended thickness (2.8 x the chamber) is on its chart
    gypsum = solved_demos["gypsum_chamber_limited"]
    names = [t["name"] for t in figures(gypsum["chart_series"], gypsum, Units())["throughput_thickness"]["data"]]
    assert any(n.startswith("chambers just full") for n in names)


def test_the_thickness_chart_is_drawn_from_half_to_twice_the_chamber(solved_demos):
    results = solved_demos["copper_concentrate"]  # matched thickness 0.94 x the chamber
    L = results["chart_series"]["chamber_thickness"]
    x = results["chart_series"]["throughput_thickness"]["chamber_thickness"]
    assert min(x) == pytest.approx(0.5 * L) and max(x) == pytest.approx(2.0 * L)


@pytest.mark.parametrize("top_left,top_right,percent,steps", [
    (6.21, None, True, (2.0, 25.0)),          # 0..8 by 2 and 0..100 by 25
    (5.65, 15.2, False, (2.0, 5.0)),          # 0..8 by 2, 0..20 by 5
    (8.0, 80.0, False, (2.0, 20.0)),
    (0.0123, 4.4e4, False, (0.0025, 1e4)),
    (97.0, None, True, (25.0, 25.0)),        # 0..100 by 25 on both
])
def test_aligned_ranges_pick_nice_steps_with_the_same_number_of_intervals(top_left, top_right, percent, steps):
    from server.charts import aligned_ranges

    left, right = aligned_ranges(top_left, top_right, right_percent=percent)
    assert (left["dtick"], right["dtick"]) == pytest.approx(steps)
    n = round(left["range"][1] / left["dtick"] / 1.03)
    assert n == round(right["range"][1] / right["dtick"] / 1.03) and n in (4, 5, 6)
    assert n * left["dtick"] >= top_left
    assert n * right["dtick"] >= (top_right or 100) and (not percent or n * right["dtick"] == 100)


def test_aligned_ranges_leave_empty_axes_to_plotly():
    from server.charts import aligned_ranges

    assert aligned_ranges(None, 3.0) == ({}, {}) and aligned_ranges(3.0, None) == ({}, {})
