"""Plotly figures of lab test evaluations: the t/V line of each test, and alpha against pressure."""

import html
import math

import numpy as np

from .charts import BASE_LAYOUT, COLORS, OVERLAY, _axis


def test_line(test: dict, index: int) -> dict:
    """(t - t0)/(V - V0) against V + V0: readings used (filled), left out (open), and the fitted line."""
    line = test["line"]
    x_mL = [v * 1e6 for v in line["x"]]  # mL reads better than m³ for a lab cell
    y = [v / 1e6 for v in line["y"]]  # s/mL
    used = line["used"]
    name = html.escape(test.get("name") or f"test {index + 1}")
    pick = lambda keep: [i for i, u in enumerate(used) if u == keep]  # noqa: E731
    traces = []
    for keep, label, symbol in ((True, "readings used", "circle"), (False, "readings left out", "circle-open")):
        idx = pick(keep)
        if idx:
            traces.append({
                "type": "scatter", "mode": "markers", "name": label, "x": [x_mL[i] for i in idx],
                "y": [y[i] for i in idx], "marker": {"color": COLORS["main"], "symbol": symbol, "size": 9},
                "customdata": [line["index"][i] + 1 for i in idx],
                "hovertemplate": "reading %{customdata}: V %{x:.4g} mL, t/V %{y:.4g} s/mL<extra></extra>",
            })
    xs = np.linspace(0.0, max(x_mL) * 1.05, 50)
    traces.append({
        "type": "scatter", "mode": "lines", "name": "fitted line", "x": [float(v) for v in xs],
        "y": [float((test["intercept"] + test["slope"] * v * 1e-6) / 1e6) for v in xs],
        "line": {"color": COLORS["best"]},
        "hovertemplate": "V %{x:.4g} mL, t/V %{y:.4g} s/mL<extra>fitted line</extra>",
    })
    return {"data": traces, "layout": {
        **BASE_LAYOUT, "title": {"text": f"{name}: t/V against V"},
        "xaxis": _axis("Filtrate volume V (+ V₀) (mL)", rangemode="tozero"),
        "yaxis": _axis("(t − t₀)/(V − V₀) (s/mL)", rangemode="tozero"),
    }}


def compressibility(result: dict) -> dict | None:
    """Specific cake resistance against pressure on log axes, with the fitted power law."""
    tests = result["tests"]
    if len(tests) < 2 or result["compressibility"] is None:
        return None
    P = [t["pressure"] / 1e5 for t in tests]
    a = [t["resistance"] for t in tests]
    s, a_ref, p_ref = result["compressibility"], result["resistance_ref"], result["reference_pressure"] / 1e5
    Ps = np.geomspace(min(P) / 1.3, max(P) * 1.3, 40)
    return {"data": [
        {"type": "scatter", "mode": "markers", "name": "tests", "x": P, "y": a,
         "text": [html.escape(t.get("name") or f"test {i + 1}") for i, t in enumerate(tests)],
         "marker": {"color": COLORS["main"], "size": 10},
         "hovertemplate": "%{text}: %{x:.3g} bar, %{y:.3g} m/kg<extra></extra>"},
        {"type": "scatter", "mode": "lines", "name": f"α = α_ref (ΔP/p_ref)^{s:.3f}", "x": [float(p) for p in Ps],
         "y": [float(a_ref * (p / p_ref) ** s) for p in Ps], "line": {"color": OVERLAY[1]},
         "hovertemplate": "%{x:.3g} bar: %{y:.3g} m/kg<extra>power law</extra>"},
    ], "layout": {
        **BASE_LAYOUT, "title": {"text": "Specific cake resistance against pressure"},
        # ticks at 1 bar times powers of 2 (0.25, 0.5, 1, 2, 4 ...), labelled in full: plotly's
        # own log ticks over less than a decade label only the first digit
        "xaxis": _axis("Pressure drop (bar)", type="log", tick0=0, dtick=math.log10(2), tickformat=".3~g"),
        "yaxis": _axis("Specific cake resistance α (m/kg)", type="log"),
    }}


def lab_figures(result: dict) -> dict:
    figs = {f"test{i}": test_line(t, i) for i, t in enumerate(result["tests"])}
    comp = compressibility(result)
    if comp is not None:
        figs["compressibility"] = comp
    return figs
