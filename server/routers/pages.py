"""HTML pages: home, the scenario editor (new or from a demo scenario), vendor assets."""

import json
import os
from functools import lru_cache
from pathlib import Path

import plotly
from fastapi import APIRouter, HTTPException, Query, Request
from fastapi.responses import FileResponse, HTMLResponse

from ..demo import load_demo_scenarios
from ..display import Units
from ..errors import InputError
from ..forms import GROUPS, UNIT_CHOICES, PrefillError, carried, carried_words, prefill
from ..scenarios import solve_inputs
from ..solve import CAUTIONS
from ..solver import SOLVER_VERSION
from ..views import PLOTLY_URL, page_json, render_results

router = APIRouter(tags=["pages"], include_in_schema=False)
PLOTLY_JS = Path(plotly.__file__).parent / "package_data" / "plotly.min.js"


def _demos(request: Request):
    """The demo scenarios, read again only when a file in the folder changed."""
    folder = request.app.state.settings.demo_dir
    try:
        files = tuple(sorted((e.name, e.stat().st_mtime_ns) for e in os.scandir(folder) if e.name.endswith(".json")))
    except OSError:
        files = ()
    return request.app.state.pages.get(("demos", str(folder), files), lambda: load_demo_scenarios(folder))


def _templates(request: Request):
    return request.app.state.templates


@router.get("/", response_class=HTMLResponse)
def home(request: Request):
    recent = request.app.state.store.recent(6) if request.app.state.settings.list_scenarios else []
    return _templates(request).TemplateResponse(
        request, "home.html", {"demos": _demos(request), "cautions": CAUTIONS, "recent": recent}
    )


def editor_page(request: Request, title: str, description: str, inputs: dict, solve: bool, parent=None,
                plan_link: str | None = None):
    """The scenario editor, filled from ``inputs``; with ``solve`` its results shown at once."""
    try:
        state = prefill(inputs)
    except PrefillError as exc:
        raise HTTPException(400, f"the prefill value of {exc.path} cannot be shown: {exc.message}") from None
    context = {
        "parent": parent,
        "title": title, "description": description, "groups": GROUPS, "unit_choices": UNIT_CHOICES,
        "state": state,
        "initial_html": None, "initial_figures": None, "initial_error": None, "flags": {},
        "carried": carried(inputs) if isinstance(inputs, dict) else {},
    }
    context["carried_words"] = carried_words(context["carried"])
    if solve:
        def first_results():
            try:
                results = solve_inputs(inputs)
            except InputError:
                # the page still opens; Calculate marks what is wrong at the fields
                return None, None, ("These inputs do not solve as they stand: press Calculate to see what "
                                    "to correct."), {}
            html, figures = render_results(_templates(request), results, results["chart_series"], Units("si"),
                                           inputs=inputs, plan_link=plan_link)
            flags = {w["field"]: w["message"] for w in results.get("input_warnings", [])}
            return html, page_json(figures), None, flags

        (context["initial_html"], context["initial_figures"], context["initial_error"],
         context["flags"]) = first_results()
    return _templates(request).TemplateResponse(request, "scenario.html", context)


@router.get("/scenario/new", response_class=HTMLResponse)
def new_scenario(request: Request, prefill: str = Query("", max_length=4000)):
    """A blank scenario; ``prefill`` (JSON, part of a cycle request) fills some fields, as from a lab fit."""
    inputs = {}
    if prefill:
        try:
            inputs = json.loads(prefill)
        except (json.JSONDecodeError, RecursionError):
            raise HTTPException(400, "the prefill parameter is not JSON (or nested too deeply)") from None
        if not isinstance(inputs, dict):
            raise HTTPException(400, "the prefill parameter must be a JSON object")
    return editor_page(request, "New scenario", "Enter your slurry, cake, cloth, press, feed and cycle; "
                       "every field takes the unit you choose.", inputs, solve=False)


@router.get("/api", response_class=HTMLResponse)
def api_page(request: Request):
    """The JSON API described from its own OpenAPI schema (no CDN-hosted viewer)."""
    schema = request.app.openapi()
    routes = []
    for path, methods in schema["paths"].items():
        for method, op in methods.items():
            body = op.get("requestBody", {}).get("content", {}).get("application/json", {}).get("schema", {})
            routes.append({"method": method.upper(), "path": path, "summary": op.get("summary", ""),
                           "description": op.get("description", ""), "body": body.get("$ref", "").rsplit("/", 1)[-1]})
    models = schema.get("components", {}).get("schemas", {})
    return _templates(request).TemplateResponse(request, "api.html", {"routes": routes, "models": models})


@router.get("/lab", response_class=HTMLResponse)
def lab_page(request: Request):
    return _templates(request).TemplateResponse(request, "lab.html", {
        "unit_choices": UNIT_CHOICES})


@router.get("/demo/{slug}", response_class=HTMLResponse)
def demo_scenario(request: Request, slug: str):
    demo = next((d for d in _demos(request) if d.slug == slug), None)
    if demo is None:
        raise HTTPException(404, f"no demo scenario named {slug!r}")
    # the whole page is the same for every visitor: rendered once per demo file and solver
    page = request.app.state.pages.get(
        ("demo page", demo.slug, demo.version, SOLVER_VERSION),
        lambda: editor_page(request, demo.name, demo.description, demo.inputs, solve=True,
                            plan_link=f"/demo/{demo.slug}/plan").body)
    return HTMLResponse(page)


@router.get("/favicon.ico", include_in_schema=False)
def favicon():
    return FileResponse(Path(__file__).resolve().parents[2] / "static" / "favicon.svg", media_type="image/svg+xml")


@lru_cache(maxsize=1)
def _plotly_exists() -> bool:
    return PLOTLY_JS.is_file()


@router.get(PLOTLY_URL)
def plotly_js():
    """plotly.js from the installed plotly package: the intranet has no CDN."""
    if not _plotly_exists():
        raise HTTPException(404, "plotly.js is not installed with the plotly package")
    return FileResponse(PLOTLY_JS, media_type="text/javascript",
                        headers={"cache-control": "public, max-age=31536000, immutable"})
