"""Plotly figures built server-side as plain figure dicts (data + layout), in display units.

One builder per chart; each takes the solved case and a display-unit converter and returns
a figure dict that the page hands to Plotly.newPlot. Axis titles carry units; hover shows
values with units. See DEVELOPERS.md, "Adding a chart".
"""

import numpy as np

from . import solver
from .display import Units

COLORS = {"main": "#1f5f8b", "best": "#c2410c", "full": "#15803d", "end": "#7c3aed", "grey": "#6b7280"}
BASE_LAYOUT = {
    "margin": {"l": 70, "r": 70, "t": 40, "b": 60},
    "hovermode": "closest",
    "legend": {"orientation": "h", "y": -0.22},
    "font": {"family": "system-ui, sans-serif", "size": 12},
    "plot_bgcolor": "#ffffff",
    "paper_bgcolor": "#ffffff",
}


def _axis(title: str, **extra) -> dict:
    return {"title": {"text": title}, "gridcolor": "#e5e7eb", "zeroline": False, **extra}


def _list(a) -> list:
    return [float(x) for x in np.asarray(a, dtype=float)]


def _marker(name, x, y, color, symbol, hover):
    return {"type": "scatter", "mode": "markers", "name": name, "x": [x], "y": [y],
            "marker": {"color": color, "size": 12, "symbol": symbol, "line": {"width": 1, "color": "#111"}},
            "hovertemplate": hover + "<extra>" + name + "</extra>"}


def throughput_vs_time(model: solver.CurveCycle, case: solver.PressCase, sol: solver.CycleSolution, u: Units) -> dict:
    """Chart 1: filtrate throughput against cycle time (button: against filtration time)."""
    V_full = sol.chambers_full_volume
    V_top = 1.6 * max(V_full, sol.unconstrained_optimum.filtrate_volume)
    V = np.concatenate((np.geomspace(V_top * 1e-3, V_full, 150), np.linspace(V_full, V_top, 90)[1:]))
    t_f = model.curve.time(V)
    T = t_f + model.wash_time(V) + case.cycle.downtime
    Q = V / T
    feasible = V <= V_full * (1 + 1e-12)
    q_label, t_label = u.label("flow"), u.label("time")
    hover = (f"cycle %{{customdata[0]:.3g}} {t_label}<br>filtration %{{customdata[1]:.3g}} {t_label}"
             f"<br>throughput %{{y:.3g}} {q_label}")

    def line(mask, name, dash):
        return {"type": "scatter", "mode": "lines", "name": name, "x": u("time", _list(T[mask])),
                "y": u("flow", _list(Q[mask])), "line": {"color": COLORS["main"], "dash": dash, "width": 2.5},
                "customdata": [[a, b] for a, b in zip(u("time", _list(T[mask])), u("time", _list(t_f[mask])))],
                "hovertemplate": hover + "<extra></extra>"}

    traces = [line(feasible, "cake fits the chambers", "solid"),
              line(~feasible, "chambers overfull (not possible)", "dot")]
    points = [("unconstrained optimum", sol.unconstrained_optimum, COLORS["best"], "star"),
              ("chambers full", sol.chambers_full, COLORS["full"], "square"),
              ("best feasible", sol.best, COLORS["best"], "circle")]
    if sol.at_end.end_reason not in ("optimum", "chambers_full") or sol.at_end.cycle != sol.best:
        points.append((f"end at {sol.at_end.end_reason.replace('_', ' ')}", sol.at_end.cycle, COLORS["end"], "diamond"))
    for name, r, color, symbol in points:
        m = _marker(name, u("time", r.cycle_time), u("flow", r.filtrate_throughput), color, symbol,
                    f"cycle %{{x:.3g}} {t_label}<br>throughput %{{y:.3g}} {q_label}")
        m["customdata"] = [[u("time", r.cycle_time), u("time", r.filtration_time)]]
        traces.append(m)
    x_cycle = [tr["x"] for tr in traces]
    x_filt = [[c[1] for c in tr["customdata"]] for tr in traces]
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Throughput against cycle time"},
        "xaxis": _axis(f"Cycle time ({t_label})"),
        "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero"),
        "updatemenus": [{
            "type": "buttons", "direction": "right", "x": 1.0, "xanchor": "right", "y": 1.12, "showactive": True,
            "buttons": [
                {"label": "cycle time", "method": "update",
                 "args": [{"x": x_cycle}, {"xaxis.title.text": f"Cycle time ({t_label})"}]},
                {"label": "filtration time", "method": "update",
                 "args": [{"x": x_filt}, {"xaxis.title.text": f"Filtration time ({t_label})"}]},
            ],
        }],
    }
    return {"data": traces, "layout": layout}


def _thickness_grid(L0: float, L_match: float) -> np.ndarray:
    lo = max(1e-3, 0.3 * min(L0, L_match))
    hi = min(0.5, 2.5 * max(L0, L_match))
    return np.unique(np.concatenate((np.linspace(lo, hi, 120), [L0], [min(max(L_match, lo), hi)])))


def throughput_vs_thickness(model: solver.CurveCycle, case: solver.PressCase, sol: solver.CycleSolution,
                            u: Units) -> dict:
    """Chart 2: best throughput and chamber fill against chamber thickness."""
    press, v = case.press, case.filtration.cake_volume_ratio
    L = _thickness_grid(press.chamber_thickness, sol.matched_chamber_thickness)
    V_full = press.fill_fraction * press.filter_area * L / (2 * v)
    V_best = np.minimum(model.V_star, V_full)
    Q = model.throughput(V_best)
    fill = v * V_best / (0.5 * press.filter_area * L)
    t_label, q_label = u.label("thickness"), u.label("flow")
    traces = [
        {"type": "scatter", "mode": "lines", "name": "best throughput", "x": u("thickness", _list(L)),
         "y": u("flow", _list(Q)), "line": {"color": COLORS["main"], "width": 2.5},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {q_label}<extra>best throughput</extra>"},
        {"type": "scatter", "mode": "lines", "name": "chamber fill at the best cycle", "yaxis": "y2",
         "x": u("thickness", _list(L)), "y": _list(100 * fill), "line": {"color": COLORS["full"], "dash": "dash"},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} %<extra>chamber fill</extra>"},
        _marker("this press", u("thickness", press.chamber_thickness), u("flow", sol.best.filtrate_throughput),
                COLORS["best"], "circle", f"%{{x:.3g}} {t_label}: %{{y:.3g}} {q_label}"),
    ]
    Lm = u("thickness", sol.matched_chamber_thickness)
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Best throughput against chamber thickness"},
        "xaxis": _axis(f"Chamber thickness ({t_label})"),
        "yaxis": _axis(f"Filtrate throughput ({q_label})", rangemode="tozero"),
        "yaxis2": _axis("Chamber fill at the best cycle (%)", overlaying="y", side="right",
                        range=[0, 105], showgrid=False),
        "shapes": [{"type": "line", "xref": "x", "yref": "paper", "x0": Lm, "x1": Lm, "y0": 0, "y1": 1,
                    "line": {"color": COLORS["grey"], "dash": "dot"}}],
        "annotations": [{"x": Lm, "y": 0.04, "xref": "x", "yref": "paper", "xanchor": "left", "yanchor": "bottom",
                         "showarrow": False, "bgcolor": "rgba(255,255,255,0.8)",
                         "text": f" chambers just fill at the optimum: {Lm:.3g} {t_label}"}],
    }
    return {"data": traces, "layout": layout}


def throughput_map(model: solver.CurveCycle, case: solver.PressCase, sol: solver.CycleSolution, u: Units) -> dict:
    """Chart 3: throughput over set filtration time x chamber thickness; the press stops when
    the chambers are full, whichever comes first."""
    press, v = case.press, case.filtration.cake_volume_ratio
    L = _thickness_grid(press.chamber_thickness, sol.matched_chamber_thickness)[::3]
    t_top = 2.0 * max(sol.unconstrained_optimum.filtration_time, sol.chambers_full.filtration_time)
    t = np.linspace(t_top / 80, t_top, 80)
    V_t = model.curve.volume(t)
    V_full = press.fill_fraction * press.filter_area * L / (2 * v)
    V = np.minimum(V_t[None, :], V_full[:, None])
    Q = model.throughput(V)
    t_full = model.curve.time(V_full)
    t_label, L_label, q_label = u.label("time"), u.label("thickness"), u.label("flow")
    traces = [
        {"type": "contour", "name": "throughput", "x": u("time", _list(t)), "y": u("thickness", _list(L)),
         "z": [u("flow", _list(row)) for row in Q], "colorscale": [[0.0, "#f7fbff"], [0.5, "#6baed6"], [1.0, "#08306b"]], "ncontours": 18,
         "colorbar": {"title": {"text": f"{q_label}"}},
         "hovertemplate": (f"filtration %{{x:.3g}} {t_label}<br>chamber %{{y:.3g}} {L_label}"
                           f"<br>throughput %{{z:.3g}} {q_label}<extra></extra>")},
        {"type": "scatter", "mode": "lines", "name": "chambers full", "x": u("time", _list(t_full)),
         "y": u("thickness", _list(L)), "line": {"color": COLORS["full"], "width": 3},
         "hovertemplate": f"chambers full after %{{x:.3g}} {t_label} at %{{y:.3g}} {L_label}<extra></extra>"},
        _marker("best for this press", u("time", sol.best.filtration_time), u("thickness", press.chamber_thickness),
                COLORS["best"], "star", f"%{{x:.3g}} {t_label}, %{{y:.3g}} {L_label}"),
    ]
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Throughput map: filtration time and chamber thickness"},
        "xaxis": _axis(f"Set filtration time ({t_label}); the press stops earlier if the chambers fill",
                       range=[0, u("time", t_top)]),
        "yaxis": _axis(f"Chamber thickness ({L_label})"),
    }
    return {"data": traces, "layout": layout}


def filtration_curves(sol: solver.CycleSolution, pump_fed: bool, u: Units) -> dict:
    """Chart 4: filtrate volume and cake thickness against time; pressure and flow if pump-fed."""
    c = sol.curves
    t = u("time", _list(c["time"]))
    t_label = u.label("time")
    traces = [
        {"type": "scatter", "mode": "lines", "name": "filtrate volume", "x": t,
         "y": u("volume", _list(c["filtrate_volume"])),
         "line": {"color": COLORS["main"], "width": 2.5},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('volume')}<extra>filtrate</extra>"},
        # cake thickness grows in step with the filtrate, so its line lies on the volume line:
        # markers on every 12th point keep it visible
        {"type": "scatter", "mode": "markers", "name": "cake thickness per face", "x": t[::12], "yaxis": "y2",
         "y": u("thickness", _list(c["cake_thickness"][::12])),
         "marker": {"color": COLORS["full"], "symbol": "triangle-up", "size": 8},
         "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('thickness')}<extra>cake</extra>"},
    ]
    layout = {
        **BASE_LAYOUT,
        "title": {"text": "Filtration to full chambers"},
        "xaxis": _axis(f"Time since feeding began ({t_label})"),
        "yaxis": _axis(f"Filtrate volume ({u.label('volume')})", rangemode="tozero"),
        "yaxis2": _axis(f"Cake thickness per face ({u.label('thickness')})", overlaying="y", side="right",
                        rangemode="tozero", showgrid=False),
    }
    if pump_fed:
        layout["yaxis"]["domain"] = [0.55, 1.0]
        layout["yaxis2"]["domain"] = [0.55, 1.0]
        layout["xaxis2"] = _axis(f"Time since feeding began ({t_label})", anchor="y3")
        layout["xaxis"]["anchor"] = "y"
        layout["yaxis3"] = _axis(f"Feed pressure ({u.label('pressure')})", domain=[0.0, 0.42], anchor="x2",
                                 rangemode="tozero")
        layout["yaxis4"] = _axis(f"Filtrate flow ({u.label('flow')})", domain=[0.0, 0.42], anchor="x2",
                                 overlaying="y3", side="right", rangemode="tozero", showgrid=False)
        layout["height"] = 620
        traces += [
            {"type": "scatter", "mode": "lines", "name": "feed pressure", "x": t, "xaxis": "x2", "yaxis": "y3",
             "y": u("pressure", _list(c["pressure"])), "line": {"color": COLORS["best"]},
             "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('pressure')}<extra>pressure</extra>"},
            {"type": "scatter", "mode": "lines", "name": "filtrate flow", "x": t, "xaxis": "x2", "yaxis": "y4",
             "y": u("flow", _list(c["flow"])), "line": {"color": COLORS["end"], "dash": "dash"},
             "hovertemplate": f"%{{x:.3g}} {t_label}: %{{y:.3g}} {u.label('flow')}<extra>flow</extra>"},
        ]
        layout["title"]["text"] = "Filtration, pressure and flow to full chambers"
    return {"data": traces, "layout": layout}


def all_charts(model, case, sol, u: Units) -> dict:
    pump_fed = not isinstance(case.feed, solver.ConstantPressure)
    return {
        "throughput_time": throughput_vs_time(model, case, sol, u),
        "throughput_thickness": throughput_vs_thickness(model, case, sol, u),
        "throughput_map": throughput_map(model, case, sol, u),
        "filtration": filtration_curves(sol, pump_fed, u),
    }
