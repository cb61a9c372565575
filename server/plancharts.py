"""Plotly figures of a production plan, in display units (no science: the numbers are the
plan's, from server/plan.py and server/solver/planning.py)."""

import copy

from .charts import BASE_LAYOUT, COLORS, _axis
from .display import Units

#: The display quantity of each basis of the target.
BASIS_QUANTITY = {"dry_solids": "mass_per_day", "slurry": "flow", "filtrate": "flow"}
BASIS_WORDS = {"dry_solids": "dry solids", "slurry": "slurry", "filtrate": "filtrate"}


def _layout(title: str, x: str, y: str, **extra) -> dict:
    layout = copy.deepcopy(BASE_LAYOUT)
    layout.update(title={"text": title}, xaxis=_axis(x), yaxis=_axis(y), **extra)
    return layout


def _vline(x: float, name: str, color: str, dash: str = "dash") -> dict:
    return {"type": "scatter", "mode": "lines", "name": name, "x": [x, x], "y": [0, 1], "yaxis": "y2",
            "line": {"color": color, "dash": dash, "width": 2}, "hoverinfo": "name+x"}


def histogram(plan: dict, u: Units) -> dict | None:
    mc = plan.get("uncertainty")
    if not mc or not (plan.get("sensitivity") or {}).get("tornado"):
        return None  # no input uncertain: every sample the same, no spread to draw
    q = BASIS_QUANTITY[plan["basis"]]
    edges = u(q, mc["histogram_edges"])
    centres = [0.5 * (a + b) for a, b in zip(edges[:-1], edges[1:], strict=True)]
    unit = u.label(q)
    data = [{"type": "bar", "name": "samples", "x": centres, "y": mc["histogram_counts"],
             "marker": {"color": COLORS["main"]}, "hovertemplate": f"%{{x:.4g}} {unit}: %{{y}} samples<extra></extra>"}]
    for key, color in (("p10", COLORS["grey"]), ("p50", COLORS["end"]), ("p90", COLORS["grey"])):
        data.append(_vline(u(q, mc["throughput"][key]), key.upper(), color, "dot"))
    data.append(_vline(u(q, plan["needed_per_press"]), "needed per press", COLORS["best"], "solid"))
    layout = _layout(f"Best throughput of one press over {mc['samples']:,} samples",
                     f"Best throughput [{unit}]", "Samples [-]",
                     bargap=0.05)
    layout["yaxis2"] = {"overlaying": "y", "range": [0, 1], "visible": False, "fixedrange": True}
    return {"data": data, "layout": layout}


def tornado(plan: dict, u: Units) -> dict | None:
    rows = (plan.get("sensitivity") or {}).get("tornado") or []
    if not rows:
        return None
    q = BASIS_QUANTITY[plan["basis"]]
    unit = u.label(q)
    base = u(q, plan["best_throughput"])
    labels = [r["label"] for r in rows][::-1]
    low = [u(q, r["throughput_low"]) - base for r in rows][::-1]
    high = [u(q, r["throughput_high"]) - base for r in rows][::-1]
    data = [
        {"type": "bar", "orientation": "h", "name": "input low", "y": labels, "x": low, "base": base,
         "marker": {"color": COLORS["main"]}, "hovertemplate": f"%{{y}} low: %{{x:.4g}} {unit}<extra></extra>"},
        {"type": "bar", "orientation": "h", "name": "input high", "y": labels, "x": high, "base": base,
         "marker": {"color": COLORS["best"]}, "hovertemplate": f"%{{y}} high: %{{x:.4g}} {unit}<extra></extra>"},
    ]
    layout = _layout("Best throughput with each uncertain input at its low and high end",
                     f"Best throughput [{unit}]", "", barmode="overlay")
    layout["yaxis"]["automargin"] = True
    layout["height"] = 160 + 40 * len(rows)
    return {"data": data, "layout": layout}


def seasons(plan: dict, u: Units) -> dict | None:
    rows = plan.get("seasons") or []
    if not rows:
        return None
    q = BASIS_QUANTITY[plan["basis"]]
    unit = u.label(q)
    t = [u.temperature(r["temperature"]) for r in rows]
    deg = u.temperature_label
    data = [{"type": "scatter", "mode": "lines+markers", "name": "best throughput", "x": t,
             "y": [u(q, r["throughput"]) for r in rows], "line": {"color": COLORS["main"]},
             "hovertemplate": f"%{{x:.3g}} {deg}: %{{y:.4g}} {unit}<extra></extra>"},
            {"type": "scatter", "mode": "lines", "name": "needed per press", "x": [min(t), max(t)],
             "y": [u(q, plan["needed_per_press"])] * 2, "line": {"color": COLORS["best"], "dash": "dash"},
             "hovertemplate": f"needed: %{{y:.4g}} {unit}<extra></extra>"}]
    return {"data": data, "layout": _layout("Best throughput of one press through the seasons",
                                            f"Slurry temperature [{deg}]", f"Best throughput [{unit}]")}


def cloth(plan: dict, u: Units) -> dict | None:
    c = plan.get("cloth")
    if not c:
        return None
    q = BASIS_QUANTITY[plan["basis"]]
    unit = u.label(q)
    y = u(q, c["average_throughput"])
    best = c["best_interval"]
    data = [{"type": "scatter", "mode": "lines", "name": "average over the interval", "x": c["interval"], "y": y,
             "line": {"color": COLORS["main"]},
             "hovertemplate": f"every %{{x}} cycles: %{{y:.4g}} {unit}<extra></extra>"},
            {"type": "scatter", "mode": "markers", "name": f"best: every {best} cycles", "x": [best],
             "y": [y[best - 1]], "marker": {"color": COLORS["best"], "size": 11, "symbol": "diamond"},
             "hoverinfo": "name"}]
    return {"data": data, "layout": _layout("Throughput against the cloth-wash interval",
                                            "Cycles between cloth washes [-]", f"Average throughput [{unit}]")}


def cycle_growth(plan: dict, u: Units) -> dict | None:
    c = plan.get("cloth")
    if not c:
        return None
    data = [{"type": "scatter", "mode": "lines", "name": "cycle time", "x": c["cycle_number"],
             "y": u("time", c["cycle_time"]), "line": {"color": COLORS["main"]},
             "hovertemplate": f"cycle %{{x}}: %{{y:.4g}} {u.label('time')}<extra></extra>"}]
    return {"data": data, "layout": _layout("Cycle time as the cloth blinds", "Cycle after a cloth wash [-]",
                                            f"Cycle time [{u.label('time')}]")}


#: The plan's charts in page order: (key, builder).
CHARTS = (("histogram", histogram), ("tornado", tornado), ("seasons", seasons), ("cloth", cloth),
          ("cycle_growth", cycle_growth))


def plan_figures(plan: dict, u: Units) -> dict:
    """Every plan chart that has data, by key."""
    out = {}
    for key, build in CHARTS:
        fig = build(plan, u)
        if fig is not None:
            out[key] = fig
    return out
