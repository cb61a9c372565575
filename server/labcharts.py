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
    if test.get("model") == "three_parameter" or not _curved(line):
        xs = np.linspace(0.0, max(x_mL) * 1.05, 50)
        ys = [float((test["intercept"] + test["slope"] * v * 1e-6) / 1e6) for v in xs]
    else:  # the cake pressure basis bends the picture: the fitted values at the readings
        xs, ys = x_mL, [v / 1e6 for v in line["fitted"]]
    traces.append({
        "type": "scatter", "mode": "lines", "name": "fitted line", "x": [float(v) for v in xs],
        "y": ys,
        "line": {"color": COLORS["best"]},
        "hovertemplate": "V %{x:.4g} mL, t/V %{y:.4g} s/mL<extra>fitted line</extra>",
    })
    return {"data": traces, "layout": {
        **BASE_LAYOUT, "title": {"text": f"{name}: t/V against V"},
        "xaxis": _axis("Filtrate volume V (+ V₀) (mL)", rangemode="tozero"),
        "yaxis": _axis("(t − t₀)/(V − V₀) (s/mL)", rangemode="tozero"),
    }}


def _curved(line: dict) -> bool:
    """The fitted values are not on a straight line in x (the cake pressure basis)."""
    x, f = np.asarray(line["x"], dtype=float), np.asarray(line["fitted"], dtype=float)
    if x.size < 3:
        return False
    coef = np.polyfit(x, f, 1)
    return bool(np.max(np.abs(np.polyval(coef, x) - f)) > 1e-6 * np.max(np.abs(f)))


#: round mantissas for ticks on a log axis, coarse to fine
_TICK_MANTISSAS = ((1, 2, 5), (1, 2, 3, 5), (1, 1.5, 2, 3, 4, 5, 7))


def log_ticks(low: float, high: float, wanted: int = 4) -> list[float]:
    """Round values (1, 2, 5 x 10^k, or finer) between ``low`` and ``high`` (> 0): the coarsest
    set that gives ``wanted`` ticks, else the finest; never fewer than two."""
    ticks: list[float] = []
    for mantissas in _TICK_MANTISSAS:
        decades = range(math.floor(math.log10(low)), math.ceil(math.log10(high)) + 1)
        ticks = [float(f"{m * 10.0 ** k:.12g}") for k in decades for m in mantissas if low <= m * 10.0 ** k <= high]
        if len(ticks) >= wanted:
            break
    if len(ticks) < 2:  # a narrow range: its ends too, to 3 figures
        ticks = sorted({*ticks, float(f"{low:.3g}"), float(f"{high:.3g}")})
    return ticks


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
        # ticks on round pressures, at least four where the range allows, labelled in full: plotly's
        # own log ticks over less than a decade label only the first digit, and powers of two
        # left tests at 2, 3 and 5 bar with ticks at 2 and 4 only (a plant-engineer check)
        "xaxis": _axis("Pressure drop (bar)", type="log", tickmode="array",
                       tickvals=log_ticks(float(Ps[0]), float(Ps[-1])), tickformat=".3~g"),
        "yaxis": _axis("Specific cake resistance α (m/kg)", type="log"),
    }}


def lab_figures(result: dict) -> dict:
    figs = {f"test{i}": test_line(t, i) for i, t in enumerate(result["tests"])}
    comp = compressibility(result)
    if comp is not None:
        figs["compressibility"] = comp
    return figs


def compression_figures(result: dict) -> dict:
    """The compression-permeability table with Tiller and Leu's laws: local resistance and
    solidosity against the solids pressure (data, local law) and the cake averages against
    the pressure across the cake. Pressures in bar."""
    pts = result["points"]
    law, avg = result["local"], result["averages"]
    p_bar = [r[0] / 1e5 for r in pts]
    positive = [p for p in p_bar if p > 0] or [0.01]
    grid = np.geomspace(min(positive) / 1.5, max(p_bar + [0.01]) * 1.5, 60)
    X = 1.0 + grid * 1e5 / law["stress_scale"]
    local_alpha = law["resistance_at_zero_stress"] * X ** law["resistance_exponent"]
    local_solids = law["solidosity_at_zero_stress"] * X ** law["solidosity_exponent"]
    dp_bar = [p / 1e5 for p in avg["cake_pressure"]]

    def fig(title, y_title, data_y, law_y, avg_y, y_log):
        return {"data": [
            {"type": "scatter", "mode": "markers", "name": "cell readings", "x": p_bar, "y": data_y,
             "marker": {"color": COLORS["main"], "size": 9},
             "hovertemplate": "%{x:.3g} bar: %{y:.4g}<extra>reading</extra>"},
            {"type": "scatter", "mode": "lines", "name": "local law", "x": grid.tolist(), "y": law_y,
             "line": {"color": OVERLAY[1]}, "hovertemplate": "%{x:.3g} bar: %{y:.4g}<extra>local law</extra>"},
            {"type": "scatter", "mode": "lines", "name": "cake average", "x": dp_bar, "y": avg_y,
             "line": {"color": COLORS["best"], "dash": "dash"},
             "hovertemplate": "%{x:.3g} bar across the cake: %{y:.4g}<extra>cake average</extra>"},
        ], "layout": {
            **BASE_LAYOUT, "title": {"text": title},
            "xaxis": _axis("Solids pressure p_s, or pressure across the cake (bar)", type="log"),
            "yaxis": _axis(y_title, **({"type": "log"} if y_log else {})),
        }}

    return {
        "local_resistance": fig("Specific resistance against solids pressure", "Specific resistance α (m/kg)",
                                [r[1] for r in pts], local_alpha.tolist(), avg["resistance"], True),
        "local_solidosity": fig("Solidosity against solids pressure", "Solids volume fraction ε_s (–)",
                                [r[2] for r in pts], local_solids.tolist(), avg["solidosity"], False),
    }


def squeeze_figures(result: dict) -> dict:
    """A lab squeeze test: the readings and the fitted Terzaghi–Voigt curve against time, and
    the residuals. Thickness in mm, expressed liquid in mL, time in min past 10 min."""
    thickness = result["measured"] == "thickness"
    factor, unit = (1e3, "mm") if thickness else (1e6, "mL")
    quantity = "Cake thickness" if thickness else "Expressed liquid"
    t_end = result["readings"][-1][0]
    t_factor, t_unit = (1 / 60, "min") if t_end > 600 else (1.0, "s")
    name = html.escape(result.get("name") or "Squeeze test")
    t_read = [r[0] * t_factor for r in result["readings"]]
    y_read = [r[1] * factor for r in result["readings"]]
    curve = result["curve"]
    fit_name = "Terzaghi–Voigt fit" if result["creep_fraction"] > 0 else "Terzaghi fit (no creep)"
    main = {"data": [
        {"type": "scatter", "mode": "markers", "name": "readings", "x": t_read, "y": y_read,
         "marker": {"color": COLORS["main"], "size": 8},
         "hovertemplate": f"%{{x:.4g}} {t_unit}: %{{y:.4g}} {unit}<extra>reading</extra>"},
        {"type": "scatter", "mode": "lines", "name": fit_name, "x": [v * t_factor for v in curve["time"]],
         "y": [v * factor for v in curve["value"]], "line": {"color": COLORS["best"]},
         "hovertemplate": f"%{{x:.4g}} {t_unit}: %{{y:.4g}} {unit}<extra>fit</extra>"},
    ], "layout": {
        **BASE_LAYOUT, "title": {"text": f"{name}: {quantity.lower()} against time"},
        "xaxis": _axis(f"Squeeze time ({t_unit})", rangemode="tozero"),
        "yaxis": _axis(f"{quantity} ({unit})"),
    }}
    residuals = {"data": [
        {"type": "scatter", "mode": "markers", "name": "measured − fitted", "x": t_read,
         "y": [r * factor for r in result["residuals"]], "marker": {"color": COLORS["main"], "size": 7},
         "hovertemplate": f"%{{x:.4g}} {t_unit}: %{{y:.3g}} {unit}<extra>residual</extra>"},
    ], "layout": {
        **BASE_LAYOUT, "title": {"text": f"{name}: residuals"},
        "xaxis": _axis(f"Squeeze time ({t_unit})", rangemode="tozero"),
        "yaxis": _axis(f"Measured − fitted ({unit})", zeroline=True, zerolinecolor="#9ca3af"),
    }}
    return {"squeeze": main, "squeeze_residuals": residuals}
