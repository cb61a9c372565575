"""Plotly figures of a press-log evaluation, from the /api/v1/press-log answer (SI) in display
units (bar, m³/h, m³): one cycle's pressure and flow with the fitted model, alpha and R_m
against cycle number with their trends, and throughput per cycle against the model's best.
Nothing here fits or computes a cycle: the numbers come from server/presslog.py."""

import numpy as np

from .charts import BASE_LAYOUT, COLORS, OVERLAY, _axis, _top, aligned_ranges


def _fits(result: dict) -> list[dict]:
    return [c for c in result["cycles"] if not c["excluded"]]


def _valid(result: dict) -> list[dict]:
    """The cycles the summaries use: fitted and not left out as physically invalid."""
    return [c for c in _fits(result) if not c.get("left_out")]


def _cycle_axis(numbers) -> dict:
    """The cycle-number axis: a count, so ticks at whole cycles only (1, 2, 5, 10, 20, ... apart,
    about eight ticks across the cycles drawn), never at 0.5 or 2.5."""
    span = (max(numbers) - min(numbers)) if numbers else 0
    step = next(m * 10**k for k in range(9) for m in (1, 2, 5) if span <= 8 * m * 10**k)
    return _axis("Cycle number", rangemode="tozero", tickmode="linear", tick0=0, dtick=step, tickformat="d")


def _left_out_note(result: dict) -> str:
    n = [str(c["number"]) for c in _fits(result) if c.get("left_out")]
    if not n:
        return ""
    listed = ", ".join(n[:5]) + (" …" if len(n) > 5 else "")
    return f" (cycle{'s' if len(n) > 1 else ''} {listed} left out: invalid fit)"


def cycle_figure(result: dict) -> dict:
    """Pressure and filtrate flow against time in the cycle drawn, the model's flow over it."""
    ch = result["chart_cycle"]
    t_min = [t / 60.0 for t in ch["time"]]
    to_h = 3600.0
    p_bar = [p / 1e5 for p in ch["pressure"]]
    left, right = aligned_ranges(_top(p_bar), _top([q * to_h for q in ch["flow"] + ch["flow_model"]]))
    return {"data": [
        {"type": "scatter", "mode": "lines", "name": "feed pressure (log)", "x": t_min,
         "y": p_bar, "line": {"color": COLORS["grey"]},
         "hovertemplate": "%{x:.3g} min: %{y:.4g} bar<extra>pressure</extra>"},
        {"type": "scatter", "mode": "lines", "name": "filtrate flow (log)", "x": t_min, "yaxis": "y2",
         "y": [q * to_h for q in ch["flow"]], "line": {"color": COLORS["main"], "width": 1},
         "hovertemplate": "%{x:.3g} min: %{y:.4g} m³/h<extra>flow, log</extra>"},
        {"type": "scatter", "mode": "lines", "name": "flow, fitted model", "x": t_min, "yaxis": "y2",
         "y": [q * to_h for q in ch["flow_model"]], "line": {"color": COLORS["best"], "dash": "dash"},
         "hovertemplate": "%{x:.3g} min: %{y:.4g} m³/h<extra>model</extra>"},
    ], "layout": {
        **BASE_LAYOUT, "title": {"text": f"Cycle {ch['number']}: pressure and flow"},
        "xaxis": _axis("Time since the start of filtration (min)", rangemode="tozero"),
        "yaxis": _axis("Feed pressure (bar)", rangemode="tozero", **left),
        "yaxis2": _axis("Filtrate flow (m³/h)", overlaying="y", side="right", rangemode="tozero", showgrid=False,
                        **right),
    }}


def volume_figure(result: dict) -> dict:
    """Filtrate volume against time in the cycle drawn: logged and the fitted model."""
    ch = result["chart_cycle"]
    t_min = [t / 60.0 for t in ch["time"]]
    return {"data": [
        {"type": "scatter", "mode": "lines", "name": "filtrate (log)", "x": t_min, "y": ch["volume"],
         "line": {"color": COLORS["main"]}, "hovertemplate": "%{x:.3g} min: %{y:.4g} m³<extra>log</extra>"},
        {"type": "scatter", "mode": "lines", "name": "fitted model", "x": t_min, "y": ch["volume_model"],
         "line": {"color": COLORS["best"], "dash": "dash"},
         "hovertemplate": "%{x:.3g} min: %{y:.4g} m³<extra>model</extra>"},
    ], "layout": {
        **BASE_LAYOUT, "title": {"text": f"Cycle {ch['number']}: filtrate volume"},
        "xaxis": _axis("Time since the start of filtration (min)", rangemode="tozero"),
        "yaxis": _axis("Filtrate volume (m³)", rangemode="tozero"),
    }}


def _trend_figure(result, key, title, y_title, unit, washes=()):
    fits = _valid(result)
    title += _left_out_note(result)
    n = [c["number"] for c in fits]
    y = [c[key] for c in fits]
    err = [c[key + "_stderr"] for c in fits]
    tr = result["trend"][key]
    when = [c["start_date"] or f"{c['start_time'] / 3600:.4g} h into the log" for c in fits]
    bars = {"type": "data", "array": err, "visible": True, "color": "#9ca3af"}
    if key == "medium_resistance":  # down to where a feed started a step before the first row would put it
        bars.update(symmetric=False, arrayminus=[max(min(e + (c.get("medium_resistance_start_bound") or 0.0), v), e)
                                                 for e, v, c in zip(err, y, fits)])  # not below zero
    name = "per cycle (bars: start-of-feed bias)" if key == "medium_resistance" else "per cycle"
    data = [{"type": "scatter", "mode": "markers", "name": name, "x": n, "y": y, "customdata": when,
             "error_y": bars,
             "marker": {"color": COLORS["main"], "size": 6},
             "hovertemplate": "cycle %{x} (%{customdata}): %{y:.4g} " + unit + "<extra></extra>"}]
    if key == "resistance" and n:
        xs = [min(n), max(n)]
        data.append({"type": "scatter", "mode": "lines", "name": "robust trend", "x": xs,
                     "y": [tr["intercept"] + tr["slope"] * x for x in xs], "line": {"color": OVERLAY[1]},
                     "hovertemplate": "cycle %{x}: %{y:.4g} " + unit + "<extra>trend</extra>"})
    if key == "medium_resistance" and n:
        cl = result["cloth"]
        starts = [n[0]] + [w for w in cl["washes"] if n[0] < w <= n[-1]]
        ends = [*[w - 1 for w in starts[1:]], n[-1]]
        xs, ys = [], []
        for a, b in zip(starts, ends):
            intercept = cl["clean_resistance"]  # the average of the intervals' clean cloths
            xs += [a, b, None]
            ys += [intercept, intercept + cl["growth_per_cycle"] * (b - a), None]
        data.append({"type": "scatter", "mode": "lines", "name": "cloth blinding (fitted growth)", "x": xs, "y": ys,
                     "line": {"color": OVERLAY[1]}, "connectgaps": False,
                     "hovertemplate": "cycle %{x}: %{y:.4g} " + unit + "<extra>growth</extra>"})
        for w in washes:
            data.append({"type": "scatter", "mode": "lines", "name": "cloth wash", "x": [w - 0.5, w - 0.5],
                         "y": [min(y), max(y)], "line": {"color": COLORS["full"], "dash": "dot"},
                         "showlegend": w == washes[0], "hoverinfo": "skip"})
    return {"data": data, "layout": {
        **BASE_LAYOUT, "title": {"text": title},
        "xaxis": _cycle_axis(n), "yaxis": _axis(y_title),
    }}


def throughput_figure(result: dict) -> dict:
    """Filtrate per cycle time, each cycle, against the model's best cycle (m³/h)."""
    fits = [c for c in _fits(result) if c["throughput"] is not None]
    n = [c["number"] for c in fits]
    data = [{"type": "scatter", "mode": "markers", "name": "plant, per cycle", "x": n,
             "y": [c["throughput"] * 3600.0 for c in fits], "marker": {"color": COLORS["main"], "size": 6},
             "hovertemplate": "cycle %{x}: %{y:.4g} m³/h<extra></extra>"}]
    xs = [min(n), max(n)] if n else [0, 1]
    for key, name, color in (("filtrate_throughput", "model's best (scenario)", COLORS["grey"]),
                             ("calibrated_filtrate_throughput", "model's best (plant values)", OVERLAY[1])):
        q = result["model"].get(key)
        if q is not None:
            data.append({"type": "scatter", "mode": "lines", "name": name, "x": xs, "y": [q * 3600.0] * 2,
                         "line": {"color": color, "dash": "dash"},
                         "hovertemplate": "%{y:.4g} m³/h<extra>" + name + "</extra>"})
    return {"data": data, "layout": {
        **BASE_LAYOUT, "title": {"text": "Filtrate throughput per cycle"},
        "xaxis": _cycle_axis(n), "yaxis": _axis("Filtrate throughput (m³/h)", rangemode="tozero"),
    }}


def presslog_figures(result: dict) -> dict:
    return {
        "cycle": cycle_figure(result),
        "volume": volume_figure(result),
        "alpha": _trend_figure(result, "resistance", "Specific cake resistance by cycle",
                               "Specific cake resistance α (m/kg)", "m/kg"),
        "cloth": _trend_figure(result, "medium_resistance", "Cloth resistance by cycle",
                               "Cloth resistance R_m (1/m)", "1/m", tuple(result["cloth"]["washes"])),
        "throughput": throughput_figure(result),
    }


def finite(fig: dict) -> bool:
    """Every number drawn is finite (None marks a break in a line)."""
    for trace in fig["data"]:
        for axis in ("x", "y"):
            vals = [v for v in trace.get(axis, []) if v is not None]
            if vals and not np.isfinite(np.asarray(vals, dtype=float)).all():
                return False
    return True
