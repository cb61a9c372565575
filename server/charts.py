"""Plotly figures built server-side as plain figure dicts (data + layout), in display units.

The solver computes every chart's data in SI (server/solver/sweeps.py; saved with a
scenario, so a saved link redraws exactly what was computed); the functions here only turn
those series and the results' marked cycles into plotly figures in display units. Nothing
here computes a cycle: axis titles carry units, hover shows values with units.
See DEVELOPERS.md, "Adding a chart".
"""

import html
import math

import numpy as np

from .display import Units

COLORS = {"main": "#1f5f8b", "best": "#c2410c", "full": "#15803d", "end": "#7c3aed", "grey": "#6b7280"}
OVERLAY = ["#1f5f8b", "#c2410c", "#15803d", "#7c3aed"]
#: The legend sits in a row above the plot area and pushes the top margin itself, so at any
#: width it never meets the axis titles or tick labels; the axes push the other margins
#: (automargin). The page shows layout.title above the plot (static/js/charts.js).
BASE_LAYOUT = {
    "margin": {"l": 8, "r": 8, "t": 8, "b": 8},
    "hovermode": "closest",
    "legend": {"orientation": "h", "x": 0, "xanchor": "left", "y": 1.02, "yanchor": "bottom"},
    "font": {"family": "system-ui, sans-serif", "size": 12},
    "plot_bgcolor": "#ffffff",
    "paper_bgcolor": "#ffffff",
}
#: Headroom above the top tick of a range set here, so a line at the top stays visible.
HEADROOM = 1.03


def _axis(title: str, **extra) -> dict:
    """An axis with its title; margins grow to fit ticks and title; large and small numbers
    in powers of ten (never SI letters such as "T" or "m", which read as units)."""
    # short ticks outside the plot keep an x label clear of a y label where the axes meet
    return {"title": {"text": title}, "gridcolor": "#e5e7eb", "zeroline": False, "automargin": True,
            "exponentformat": "power", "ticks": "outside", "ticklen": 4, "tickcolor": "#9ca3af", **extra}


def _list(a) -> list:
    return np.asarray(a, dtype=float).tolist()


def _marker(name, x, y, color, symbol, hover, customdata=None):
    m = {"type": "scatter", "mode": "markers", "name": name, "x": [x], "y": [y],
         "marker": {"color": color, "size": 12, "symbol": symbol, "line": {"width": 1, "color": "#111"}},
         "hovertemplate": hover + "<extra>" + name + "</extra>"}
    if customdata is not None:
        m["customdata"] = [customdata]
    return m


# ---- tick values ------------------------------------------------------------------------------

NICE_STEPS = (1.0, 2.0, 2.5, 5.0, 10.0)


def nice_step(raw: float) -> float:
    """The smallest step of 1, 2, 2.5 or 5 times a power of ten that is at least raw (> 0)."""
    base = 10.0 ** math.floor(math.log10(raw))
    return next(m * base for m in NICE_STEPS if m * base >= raw * (1 - 1e-9))


def _top(*values) -> float | None:
    """The largest finite value drawn on an axis, or None when it has none above zero."""
    flat = [float(v) for vs in values for v in np.ravel(np.asarray(vs, dtype=float)) if math.isfinite(v)]
    top = max(flat, default=0.0)
    return top if top > 0 else None


def aligned_ranges(left_top: float | None, right_top: float | None, right_percent: bool = False) -> tuple[dict, dict]:
    """Ranges from zero and tick steps for a left axis and the right axis overlaying it: nice
    steps on both and the same number of intervals, so the right axis's ticks fall on the left
    axis's grid lines. A percent axis runs to 100 % (steps of 20 % or 25 %), never beyond.
    Empty dicts (plotly's own ticks) when an axis has nothing above zero."""
    if left_top is None or (right_top is None and not right_percent):
        return {}, {}
    best = None
    for n in ((4, 5) if right_percent else (4, 5, 6)):
        dl = nice_step(left_top / n)
        dr = 100.0 / n if right_percent else nice_step(right_top / n)
        waste = max(n * dl / left_top, 1.0 if right_percent else n * dr / right_top)
        if best is None or waste < best[0] - 1e-9:
            best = (waste, n, dl, dr)
    _, n, dl, dr = best
    axis = lambda d: {"range": [0.0, n * d * HEADROOM], "tickmode": "linear", "tick0": 0.0, "dtick": d}  # noqa: E731
    return axis(dl), axis(dr)


def colorbar_ticks(lo: float, hi: float) -> tuple[list[float], list[str]]:
    """Nice tick values between lo and hi, and hi itself (the top of the colour bar) labelled;
    a nice tick too close to the top to keep their labels apart is left out."""
    if not hi > lo:
        return [hi], [f"{hi:.3g}"]
    step = nice_step((hi - lo) / 5)
    first = math.ceil(lo / step - 1e-9) * step
    values = [v for v in np.arange(first, hi, step) if v <= hi - 0.45 * step]
    values = [float(v) for v in values] + [float(hi)]
    return values, [f"{v:.3g}" for v in values]


# ---- figures (display units) ----------------------------------------------------------------


def throughput_vs_time(s: dict, results: dict, u: Units) -> dict:
    """Chart 1: filtrate throughput against cycle time (button: against filtration time)."""
    T, t_f, Q = np.array(s["cycle_time"]), np.array(s["filtration_time"]), np.array(s["filtrate_throughput"])
    feasible = np.array(s["feasible"], dtype=bool)
    q_label, t_label = u.label("flow"), u.label("time")
    hover = (f"cycle %{{customdata[0]:.3g}} {t_label}<br>filtration %{{customdata[1]:.3g}} {t_label}"
             f"<br>throughput %{{y:.3g}} {q_label}")

    def line(mask, name, dash):
        Tm, tm = u("time", _list(T[mask])), u("time", _list(t_f[mask]))
        return {"type": "scatter", "mode": "lines", "name": name, "x": Tm, "y": u("flow", _list(Q[mask])),
                "line": {"color": COLORS["main"], "dash": dash, "width": 2.5},
                "customdata": [[a, b] for a, b in zip(Tm, tm)], "hovertemplate": hover + "<extra></extra>"}

    meets = np.array(s.get("meets_specs", [True] * feasible.size), dtype=bool)
    traces = [line(feasible & meets, "cake fits the chambers", "solid")]
    if np.any(feasible & ~meets):
        traces.append(line(feasible & ~meets, "misses a specification", "dash"))
    traces.append(line(~feasible, "chambers overfull (not possible)", "dot"))
    points = [("unconstrained optimum", results["unconstrained_optimum"], COLORS["best"], "star"),
              ("chambers full", results["chambers_full"], COLORS["full"], "square"),
              ("best feasible", results["best"], COLORS["best"], "circle")]
    end, best = results["at_end"], results["best"]
    if end["end_reason"] not in ("optimum", "chambers_full") or end["filtrate_volume"] != best["filtrate_volume"]:
        points.append((f"end at {end['end_reason'].replace('_', ' ')}", end, COLORS["end"], "diamond"))
    for name, c, color, symbol in points:
        traces.append(_marker(name, u("time", c["cycle_time"]), u("flow", c["filtrate_throughput"]), color, symbol,
                              f"cycle %{{x:.3g}} {t_label}<br>throughput %{{y:.3g}} {q_label}",
                              [u("time", c["cycle_time"]), u("time", c["filtration_time"])]))
    x_cycle = [tr["x"] for tr in traces]
    x_filt = [[c[1] for c in tr["customdata"]] for tr in traces]
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Throughput against cycle time"},
        "xaxis": _axis(f"Cycle time ({t_label})"),
        "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero"),
        # inside the plot area at the bottom right, where the throughput curve never runs
        # (it rises from zero and stays high): clear of the legend at any width
        "updatemenus": [{
            "type": "buttons", "direction": "right", "x": 1.0, "xanchor": "right", "y": 0.02, "yanchor": "bottom",
            "showactive": True, "bgcolor": "#ffffff", "bordercolor": "#d5dbe1", "pad": {"r": 4, "b": 4},
            "buttons": [
                {"label": "cycle time", "method": "update",
                 "args": [{"x": x_cycle}, {"xaxis.title.text": f"Cycle time ({t_label})"}]},
                {"label": "filtration time", "method": "update",
                 "args": [{"x": x_filt}, {"xaxis.title.text": f"Filtration time ({t_label})"}]},
            ],
        }],
    }
    return {"data": traces, "layout": layout}


def throughput_vs_thickness(s: dict, results: dict, L_press: float, u: Units) -> dict:
    """Chart 2: best throughput and chamber fill against chamber thickness, with the thickness
    at which the chambers just fill at the optimum where it lies on the chart."""
    L = s["chamber_thickness"]
    t_label, q_label = u.label("thickness"), u.label("flow")
    Q = u("flow", s["filtrate_throughput"])
    Q_press = u("flow", results["best"]["filtrate_throughput"])
    left, right = aligned_ranges(_top(Q, [Q_press]), 100.0, right_percent=True)
    traces = [
        {"type": "scatter", "mode": "lines", "name": "best throughput", "x": u("thickness", L),
         "y": Q, "line": {"color": COLORS["main"], "width": 2.5},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {q_label}<extra>best throughput</extra>"},
        {"type": "scatter", "mode": "lines", "name": "chamber fill at the best cycle", "yaxis": "y2",
         "x": u("thickness", L), "y": [100 * f for f in s["chamber_fill"]],
         "line": {"color": COLORS["full"], "dash": "dash"},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} %<extra>chamber fill</extra>"},
        _marker("this press", u("thickness", L_press), Q_press,
                COLORS["best"], "circle", f"%{{x:.3g}} {t_label}: %{{y:.3g}} {q_label}"),
    ]
    L_shown = u("thickness", L)
    Lm = u("thickness", results["derived"]["matched_chamber_thickness"])
    x_title = f"Chamber thickness ({t_label})"
    if min(L_shown) <= Lm <= max(L_shown):
        top = left["range"][1] if left else max(Q)
        name = f"chambers just full at optimum: {Lm:.3g} {t_label}"
        traces.append({"type": "scatter", "mode": "lines", "name": name, "x": [Lm, Lm], "y": [0.0, top],
                       "line": {"color": COLORS["grey"], "dash": "dot", "width": 1.5}, "hoverinfo": "skip"})
    else:
        x_title += f"; the chambers just fill at the optimum at {Lm:.3g} {t_label}, off this chart"
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Best throughput against chamber thickness"},
        "xaxis": _axis(x_title),
        "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero", **left),
        "yaxis2": _axis("Chamber fill at the best cycle (%)", overlaying="y", side="right", showgrid=False,
                        **(right or {"range": [0, 100]})),
    }
    return {"data": traces, "layout": layout}


def throughput_map(s: dict, results: dict, L_press: float, u: Units) -> dict:
    """Chart 3: throughput over set filtration time x chamber thickness, with the chambers-full line."""
    t_label, L_label, q_label = u.label("time"), u.label("thickness"), u.label("flow")
    t = u("time", s["filtration_time"])
    z = [u("flow", row) for row in s["filtrate_throughput"]]
    z_lo, z_hi = float(np.min(z)), float(np.max(z))
    tickvals, ticktext = colorbar_ticks(z_lo, z_hi)
    traces = [
        {"type": "contour", "name": "throughput", "x": t, "y": u("thickness", s["chamber_thickness"]),
         "z": z, "zauto": False, "zmin": z_lo, "zmax": z_hi,
         "colorscale": [[0.0, "#f7fbff"], [0.5, "#6baed6"], [1.0, "#08306b"]], "ncontours": 18,
         # labelled to its top: the highest throughput on the map is the top tick
         "colorbar": {"title": {"text": f"Throughput ({q_label})", "side": "right"}, "thickness": 14,
                      "tickmode": "array", "tickvals": tickvals, "ticktext": ticktext},
         "hovertemplate": (f"filtration %{{x:.3g}} {t_label}<br>chamber %{{y:.3g}} {L_label}"
                           f"<br>throughput %{{z:.3g}} {q_label}<extra></extra>")},
        {"type": "scatter", "mode": "lines", "name": "chambers full (the press stops there)",
         "x": u("time", s["chambers_full_time"]),
         "y": u("thickness", s["chamber_thickness"]), "line": {"color": COLORS["full"], "width": 3},
         "hovertemplate": f"chambers full after %{{x:.3g}} {t_label} at %{{y:.3g}} {L_label}<extra></extra>"},
        _marker("best for this press", u("time", results["best"]["filtration_time"]), u("thickness", L_press),
                COLORS["best"], "star", f"%{{x:.3g}} {t_label}, %{{y:.3g}} {L_label}"),
    ]
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Throughput map: filtration time and chamber thickness"},
        "xaxis": _axis(f"Set filtration time ({t_label})", range=[0, t[-1]]),
        "yaxis": _axis(f"Chamber thickness ({L_label})"),
    }
    return {"data": traces, "layout": layout}


def filtration_curves(c: dict, results: dict, pressure_varies: bool, u: Units) -> dict:
    """Chart 4: filtrate volume and cake thickness against time, with the best cycle's end of
    filtration marked ("stop here"); pressure and flow on a panel below, on the same time axis,
    where the feed's pressure varies (pumps, pressure steps)."""
    t = u("time", c["time"])
    t_label, v_label, L_label = u.label("time"), u.label("volume"), u.label("thickness")
    V, cake = u("volume", c["filtrate_volume"]), u("thickness", c["cake_thickness"])
    best, end = results["best"], results["at_end"]
    t_stop = u("time", best["filtration_time"])
    traces = [
        {"type": "scatter", "mode": "lines", "name": "filtrate volume", "x": t, "y": V,
         "line": {"color": COLORS["main"], "width": 2.5},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {v_label}<extra>filtrate</extra>"},
        # cake thickness grows in step with the filtrate, so its line would lie on the volume
        # line: markers on every 12th point keep it visible
        {"type": "scatter", "mode": "markers", "name": "cake thickness per face", "x": t[::12], "yaxis": "y2",
         "y": cake[::12], "marker": {"color": COLORS["full"], "symbol": "triangle-up", "size": 8},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {L_label}<extra>cake</extra>"},
        _marker("stop filtering here (best cycle)", t_stop, u("volume", best["filtrate_volume"]), COLORS["best"],
                "x", f"stop after %{{x:.3g}} {t_label}: %{{y:.3g}} {v_label}"),
    ]
    if end["end_reason"] not in ("optimum", "chambers_full") or end["filtrate_volume"] != best["filtrate_volume"]:
        traces.append(_marker(f"end at {end['end_reason'].replace('_', ' ')}", u("time", end["filtration_time"]),
                              u("volume", end["filtrate_volume"]), COLORS["end"], "diamond",
                              f"%{{x:.3g}} {t_label}: %{{y:.3g}} {v_label}"))
    y1, y2 = aligned_ranges(_top(V, [u("volume", best["filtrate_volume"])]), _top(cake))
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Filtration to full chambers"},
        "xaxis": _axis(f"Time since feeding began ({t_label})", rangemode="tozero"),
        "yaxis": _axis(f"Filtrate volume ({v_label})", rangemode="tozero", **y1),
        "yaxis2": _axis(f"Cake thickness per face ({L_label})", overlaying="y", side="right",
                        rangemode="tozero", showgrid=False, **y2),
        # the best cycle's end of filtration, across every panel
        "shapes": [{"type": "line", "xref": "x", "yref": "paper", "x0": t_stop, "x1": t_stop, "y0": 0, "y1": 1,
                    "line": {"color": COLORS["best"], "dash": "dot", "width": 1.5}}],
    }
    if pressure_varies:
        P, flow = u("pressure", c["pressure"]), u("flow", c["flow"])
        y3, y4 = aligned_ranges(_top(P), _top(flow))
        layout["yaxis"]["domain"] = [0.56, 1.0]
        layout["yaxis2"]["domain"] = [0.56, 1.0]
        layout["xaxis"]["anchor"] = "y"
        # the lower panel's time axis is the upper one's: same domain, same range when zoomed
        layout["xaxis2"] = _axis(f"Time since feeding began ({t_label})", anchor="y3", matches="x")
        layout["yaxis3"] = _axis(f"Feed pressure ({u.label('pressure')})", domain=[0.0, 0.40], anchor="x2",
                                 rangemode="tozero", **y3)
        layout["yaxis4"] = _axis(f"Filtrate flow ({u.label('flow')})", domain=[0.0, 0.40], anchor="x2",
                                 overlaying="y3", side="right", rangemode="tozero", showgrid=False, **y4)
        layout["height"] = 640
        traces += [
            {"type": "scatter", "mode": "lines", "name": "feed pressure", "x": t, "xaxis": "x2", "yaxis": "y3",
             "y": P, "line": {"color": COLORS["best"]},
             "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('pressure')}<extra>pressure</extra>"},
            {"type": "scatter", "mode": "lines", "name": "filtrate flow", "x": t, "xaxis": "x2", "yaxis": "y4",
             "y": flow, "line": {"color": COLORS["end"], "dash": "dash"},
             "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('flow')}<extra>flow</extra>"},
        ]
        layout["title"]["text"] = "Filtration, pressure and flow to full chambers"
    return {"data": traces, "layout": layout}


def washing(w: dict, results: dict) -> dict:
    """Chart 5 (with a wash model): washate concentration and solute removed against the wash
    ratio in cake pore volumes, the best cycle's wash marked."""
    W = w["wash_ratio"]
    removal = [100.0 * x for x in w["removal"]]
    conc = [100.0 * x for x in w["concentration"]]
    traces = [
        {"type": "scatter", "mode": "lines", "name": "solute removed", "x": W, "y": removal,
         "line": {"color": COLORS["main"], "width": 2.5},
         "hovertemplate": "%{x:.3g} pore volumes: %{y:.4g} % removed<extra>removed</extra>"},
        {"type": "scatter", "mode": "lines", "name": "washate concentration (of the cake liquor's)", "x": W,
         "y": conc, "yaxis": "y2", "line": {"color": COLORS["end"], "dash": "dash"},
         "hovertemplate": "%{x:.3g} pore volumes: %{y:.3g} % of the initial concentration<extra>washate</extra>"},
    ]
    if w.get("best_wash_ratio"):
        traces.append(_marker("best cycle's wash", w["best_wash_ratio"], 100.0 * (w.get("best_removal") or 0.0),
                              COLORS["best"], "x", "%{x:.3g} pore volumes: %{y:.4g} % removed"))
    shapes = []
    spec = (results.get("specs") or {}).get("min_solute_removal")
    if spec:
        shapes.append({"type": "line", "xref": "paper", "yref": "y", "x0": 0, "x1": 1, "y0": 100 * spec["required"],
                       "y1": 100 * spec["required"], "line": {"color": COLORS["full"], "dash": "dot", "width": 1.5}})
    per = w.get("pore_volumes_per_filtrate")
    title = "Washing: solute removed and washate" + (
        f" (1 filtrate volume = {per:.3g} pore volumes)" if per else "")
    y1, y2 = aligned_ranges(100.0, max(conc))
    layout = {
        **BASE_LAYOUT,
        "title": {"text": title},
        "xaxis": _axis("Wash ratio (cake pore volumes)", rangemode="tozero"),
        "yaxis": _axis("Solute removed (%)", **y1),
        "yaxis2": _axis("Washate concentration (% of initial)", overlaying="y", side="right", showgrid=False, **y2),
        "shapes": shapes,
    }
    return {"data": traces, "layout": layout}


def figures(series: dict, results: dict, u: Units) -> dict:
    """All charts from saved or fresh chart series and the results."""
    L = series["chamber_thickness"]
    # scenarios saved before the feed said so itself stored the same flag as "pump_fed"
    pressure_varies = series.get("pressure_varies", series.get("pump_fed", False))
    out = {
        "throughput_time": throughput_vs_time(series["throughput_time"], results, u),
        "throughput_thickness": throughput_vs_thickness(series["throughput_thickness"], results, L, u),
        "throughput_map": throughput_map(series["throughput_map"], results, L, u),
        "filtration": filtration_curves(series["filtration"], results, pressure_varies, u),
    }
    if series.get("washing"):
        out["washing"] = washing(series["washing"], results)
    return out


#: Characters of a scenario's name kept in a legend entry (fits a 360 px wide chart).
LEGEND_NAME = 26


def _short(name: str) -> str:
    return name if len(name) <= LEGEND_NAME else name[: LEGEND_NAME - 1].rstrip() + "…"


def overlay(scenarios: list[tuple[str, dict]], u: Units) -> dict:
    """Compare view: throughput against cycle time and against thickness, one line per scenario."""
    q_label, t_label, L_label = u.label("flow"), u.label("time"), u.label("thickness")
    time_traces, thick_traces = [], []
    for i, (raw_name, results) in enumerate(scenarios):
        # plotly reads a little HTML in trace names; a legend entry does not wrap, so a long
        # name is shortened there (the hover label gives it whole)
        full = html.escape(raw_name)
        name = html.escape(_short(raw_name))
        s = results["chart_series"]
        color = OVERLAY[i % len(OVERLAY)]
        st = s["throughput_time"]
        ok = [k for k, f in enumerate(st["feasible"]) if f]
        time_traces.append({"type": "scatter", "mode": "lines", "name": name, "line": {"color": color, "width": 2.5},
                            "x": u("time", [st["cycle_time"][k] for k in ok]),
                            "y": u("flow", [st["filtrate_throughput"][k] for k in ok]),
                            "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {q_label}<extra>{full}</extra>"})
        b = results["best"]
        time_traces.append(_marker(f"{name}: best", u("time", b["cycle_time"]), u("flow", b["filtrate_throughput"]),
                                   color, "circle", f"%{{x:.3g}} {u.label('time')}: %{{y:.3g}} {q_label}"))
        sl = s["throughput_thickness"]
        thick_traces.append({"type": "scatter", "mode": "lines", "name": name, "line": {"color": color, "width": 2.5},
                             "x": u("thickness", sl["chamber_thickness"]), "y": u("flow", sl["filtrate_throughput"]),
                             "hovertemplate": f"%{{x:.3g}} {L_label}: %{{y:.3g}} {q_label}<extra>{full}</extra>"})
        thick_traces.append(_marker(f"{name}: this press", u("thickness", s["chamber_thickness"]),
                                    u("flow", b["filtrate_throughput"]), color, "circle",
                                    f"%{{x:.3g}} {u.label('thickness')}: %{{y:.3g}} {q_label}"))
    return {
        "throughput_time": {"data": time_traces, "layout": {
            **BASE_LAYOUT, "title": {"text": "Throughput against cycle time (cake within the chambers)"},
            "xaxis": _axis(f"Cycle time ({u.label('time')})"),
            "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero")}},
        "throughput_thickness": {"data": thick_traces, "layout": {
            **BASE_LAYOUT, "title": {"text": "Best throughput against chamber thickness"},
            "xaxis": _axis(f"Chamber thickness ({u.label('thickness')})"),
            "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero")}},
    }


#: Significant figures kept in chart data: more than a screen or a hover label shows.
CHART_FIGURES = 6


def _rounded(values):
    """A list of numbers (or of lists) to CHART_FIGURES significant figures of its largest
    magnitude, as plain floats; anything else unchanged."""
    try:
        a = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        return values
    if a.size == 0 or not np.isfinite(a).all():
        return values
    top = float(np.abs(a).max())
    if top == 0.0:
        return a.tolist()
    decimals = CHART_FIGURES - 1 - int(np.floor(np.log10(top)))
    return np.round(a, decimals).tolist()


def compact(figs: dict) -> dict:
    """Figures with their data rounded for the page (a third of the JSON, same picture)."""
    out = {}
    for key, fig in figs.items():
        traces = []
        for trace in fig["data"]:
            trace = dict(trace)
            for name in ("x", "y", "z", "customdata"):
                if isinstance(trace.get(name), list):
                    trace[name] = _rounded(trace[name])
            traces.append(trace)
        out[key] = {**fig, "data": traces}
    return out
