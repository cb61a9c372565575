"""Formatting for pages: every number a person sees carries its unit."""

import hashlib
import math
import threading
from collections import OrderedDict

import orjson
from markupsafe import Markup

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def power_of_ten(value: float, digits: int | None = 3) -> str:
    """``value`` as people write large and small numbers: "1.85×10¹¹" (not "1.85e+11");
    ``digits`` None: as many as the number has ("4×10¹⁰" for 4e10).

    >>> power_of_ten(1.853e11), power_of_ten(-4.2e-5, 2), power_of_ten(4e10, None)
    ('1.85×10¹¹', '-4.2×10⁻⁵', '4×10¹⁰')
    """
    text = f"{value:.{digits - 1}e}" if digits else f"{value:e}"
    mantissa, exponent = text.split("e")
    if digits is None:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return f"{mantissa}×10{str(int(exponent)).translate(_SUPERSCRIPT)}"


def fmt(value, digits: int = 3) -> str:
    """A number to ``digits`` significant figures, plainly written."""
    if value is None:
        return "–"
    if not isinstance(value, int | float) or not math.isfinite(value):
        return str(value)
    if value == 0:
        return "0"
    mag = abs(value)
    if mag >= 1e6 or mag < 1e-3:
        return power_of_ten(value, digits)
    decimals = max(digits - 1 - int(math.floor(math.log10(mag))), 0)
    return f"{value:,.{decimals}f}"


def fmt_error(value, digits: int = 2) -> str:
    """A standard error (the "± x" beside a figure) to ``digits`` significant figures at any
    size: "4.2×10⁵", not "424,809" (fmt writes every digit of a number below a million, right
    for a figure, not for its uncertainty: a plant-engineer check).

    >>> fmt_error(424809.3), fmt_error(0.01234), fmt_error(87.6), fmt_error(99.6), fmt_error(None)
    ('4.2×10⁵', '0.012', '88', '1.0×10²', '–')
    """
    if not isinstance(value, int | float) or not math.isfinite(value) or value == 0:
        return fmt(value, digits)
    value = float(f"{value:.{digits - 1}e}")  # rounded first: 99.6 is "1.0×10²", like 100
    if abs(value) >= 10 ** digits:
        return power_of_ten(value, digits)
    return fmt(value, digits)


def fmt_degrees(value) -> str:
    """A temperature in degrees to a tenth, a whole one without its ".0": "8", "46.4" (fmt
    wrote 8 °C as "8.00", three figures of a number below ten: a plant-engineer check)."""
    if not isinstance(value, int | float) or not math.isfinite(value):
        return fmt(value)
    text = f"{round(value, 1):,.1f}".removesuffix(".0")
    return "0" if text == "-0" else text


PLOTLY_URL = "/vendor/plotly.min.js"


def plotly_url() -> str:
    """plotly.js from the installed plotly package, versioned so browsers may cache it."""
    import plotly

    return f"{PLOTLY_URL}?v={plotly.__version__}"


def page_json(value) -> Markup:
    """JSON for a <script type="application/json"> block: fast (orjson) and HTML-safe (the
    characters that could end the block or start markup are escaped, as Jinja's tojson does)."""
    text = orjson.dumps(value, option=orjson.OPT_SERIALIZE_NUMPY).decode()
    for char, escaped in (("<", "\\u003c"), (">", "\\u003e"), ("&", "\\u0026"), ("'", "\\u0027")):
        text = text.replace(char, escaped)
    return Markup(text)


def when(iso: str) -> Markup:
    """A stored UTC timestamp as a readable ``<time>``: "2026-12-02 01:23 UTC" as served, turned
    into the reader's local time by static/js/dates.js."""
    from datetime import datetime

    try:
        t = datetime.fromisoformat(iso)
    except (TypeError, ValueError):
        return Markup("<time>{}</time>").format(iso)
    return Markup('<time datetime="{}" data-local>{} UTC</time>').format(iso, t.strftime("%Y-%m-%d %H:%M"))


def register_filters(env, static_root) -> None:
    env.filters["fmt"] = fmt
    env.filters["fmt_error"] = fmt_error
    env.filters["fmt_degrees"] = fmt_degrees
    env.filters["when"] = when
    env.filters["page_json"] = page_json
    env.globals["static_url"] = StaticUrls(static_root)
    env.globals["plotly_url"] = plotly_url


class StaticUrls:
    """URLs of static files with a content hash, so browsers may cache them for long."""

    def __init__(self, root, prefix: str = "/static"):
        self.root = root
        self.prefix = prefix
        self._hashes: dict[str, str] = {}

    def __call__(self, path: str) -> str:
        digest = self._hashes.get(path)
        if digest is None:
            digest = hashlib.sha256((self.root / path).read_bytes()).hexdigest()[:12]
            self._hashes[path] = digest
        return f"{self.prefix}/{path}?v={digest}"


def render_results(templates, results: dict, chart_series: dict | None, units,
                   chart_results: dict | None = None, inputs: dict | None = None,
                   plan_link: str | None = None) -> tuple[str, dict]:
    """The results pane and its charts, for every page that shows a scenario's results.

    The editor's first view, its partial update after Calculate and a saved scenario's page
    all come through here: the same template, the same figures, the same cautions.
    Returns (HTML of the results pane, plotly figures by chart key). ``chart_results`` marks
    the charts when they come from another solve than the pane (a saved scenario redrawn by a
    changed solver); no ``chart_series``: no charts. ``inputs`` (the editor's) adds the inputs
    in words for print, where the form is not printed. ``plan_link``: the scenario's Plan page
    (a saved or demo scenario; unsaved inputs are asked to be saved first).
    """
    from .charts import compact, figures
    from .forms import LABELS
    from .inputs_table import input_rows

    results = with_current_fields(results)
    rows = input_rows(inputs) if inputs else None
    html = templates.get_template("_results.html").render(
        {"results": results, "u": units, "labels": LABELS, "input_rows": rows, "plan_link": plan_link})
    if chart_series is None:
        return html, {}
    return html, compact(figures(chart_series, chart_results or results, units))


def with_current_fields(results: dict) -> dict:
    """Results saved by an earlier version, with the fields added since at their defaults (no
    squeeze, blow, wash model or specifications then), so one template draws old and new alike.
    The saved figures themselves are untouched."""
    from dataclasses import MISSING, fields

    from .solver.cycle import CycleResult

    defaults = {f.name: f.default for f in fields(CycleResult) if f.default is not MISSING}
    if all(k in results.get("best", {}) for k in defaults) and "stage_order" in results:
        return results
    out = dict(results)
    for section in ("best", "unconstrained_optimum", "chambers_full", "at_end"):
        if isinstance(out.get(section), dict):
            out[section] = {**defaults, **out[section]}
    out["thickness_comparison"] = [
        {**row, **{k: {**defaults, **row[k]} for k in ("best", "chambers_full") if isinstance(row.get(k), dict)}}
        for row in out.get("thickness_comparison", [])]
    if "stage_order" not in out:
        washed = bool(out.get("best", {}).get("wash_volume"))
        out["stage_order"] = ["fill", "filtration", *(["wash"] if washed else []), "downtime"]
    out.setdefault("specs", None)
    return out


class PageCache:
    """A small least-recently-used cache of rendered page parts, on the app (app.state.pages).

    Keys carry everything a part depends on (a demo file's modification time, a scenario id
    with the unit system and the solver version), so a cached part is never stale: saved
    scenarios never change, and a new solver version makes new keys.
    """

    def __init__(self, size: int = 512):
        self.size = size
        self._parts: OrderedDict = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key, build, keep=lambda value: True):
        """The part under ``key``, built on first use; ``keep`` says whether to cache it."""
        with self._lock:
            if key in self._parts:
                self._parts.move_to_end(key)
                return self._parts[key]
        value = build()  # outside the lock: two first views may both build, one result is kept
        if not keep(value):
            return value
        with self._lock:
            self._parts[key] = value
            self._parts.move_to_end(key)
            while len(self._parts) > self.size:
                self._parts.popitem(last=False)
        return value
