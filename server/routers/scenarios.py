"""Saved scenarios: the JSON API (/api/v1/scenarios) and the pages (/s/<id>, list, compare)."""

import csv
import io
import json
import math

from fastapi import APIRouter, HTTPException, Query, Request, UploadFile
from fastapi.responses import HTMLResponse, JSONResponse, Response
from starlette.convertors import Convertor, register_url_convertor

from .. import solver
from ..budget import within_budget
from ..charts import compact, overlay
from ..display import Units, UnitSystem
from ..errors import InputError
from ..inputs_table import compare_rows, input_rows
from ..scenarios import Redrawn, redraw, save
from ..schemas.common import ERROR_RESPONSES
from ..schemas.scenarios import ScenarioCreated, ScenarioIn, ScenarioList, ScenarioOut
from ..solve import CAUTIONS
from ..store import Cursor, Listed, Scenario
from ..store.base import OLDEST
from ..uploads import read_upload
from ..views import page_json, render_results


class ScenarioIdConvertor(Convertor):
    """A scenario id in a path: any segment but "import" (POST /import is its own route, so a
    GET there is a 405 that lists POST, not a search for a scenario called "import")."""

    regex = "(?!import$)[^/]+"

    def convert(self, value: str) -> str:
        return value

    def to_string(self, value: str) -> str:
        return value


register_url_convertor("scenario_id", ScenarioIdConvertor())

router = APIRouter(prefix="/api/v1/scenarios", tags=["scenarios"], responses=ERROR_RESPONSES)
pages = APIRouter(tags=["pages"], include_in_schema=False)
PER_PAGE = 20
#: the cursor value of the oldest page in links (a cursor token would do too)
OLDEST_LINK = "oldest"
MAX_IMPORT_BYTES = 2_000_000


def _store(request: Request):
    return request.app.state.store


def _link(sid: str) -> str:
    return f"/s/{sid}"


def _out(request: Request, s: Scenario) -> dict:
    """A saved scenario as the API and the export give it: results with curves and chart series."""
    return {"id": s.id, "name": s.name, "note": s.note, "created": s.created, "inputs": s.inputs,
            "results": _redrawn(request, s).results, "solver_version": s.solver_version, "parent": s.parent,
            "link": _link(s.id), "plan": s.results.get("plan_inputs")}


#: The parts of stored results every page reads; a record without them is damaged.
RESULT_PARTS = ("best", "unconstrained_optimum", "chambers_full", "at_end", "derived")


def _redrawn(request: Request, s: Scenario) -> Redrawn:
    """Curves and chart series of a saved scenario, and what the current solver changed:
    computed once per scenario and solver version (saved scenarios never change)."""
    return request.app.state.pages.get(("redrawn", s.id, solver.SOLVER_VERSION), lambda: redraw(s))


def _listing_allowed(request: Request) -> None:
    if not request.app.state.settings.list_scenarios:
        raise HTTPException(403, "this server does not list saved scenarios (PRESSCYCLE_LIST_SCENARIOS is off): "
                                 "open a scenario by its link")


def _cursor(cursor: str | None) -> str | None:
    """A cursor from the query, checked: a bad one is a 422 at ``cursor``."""
    if cursor:
        try:
            Cursor.decode(cursor)
        except ValueError as exc:
            raise InputError([(("query", "cursor"), str(exc))]) from None
    return cursor or None


def _item(s: Listed) -> dict:
    return {"id": s.id, "name": s.name, "note": s.note, "created": s.created, "link": _link(s.id),
            "summary": s.summary}


def _get_or_404(request: Request, sid: str) -> Scenario:
    store = _store(request)
    # saved scenarios never change: the parsed record is kept for the next view
    s = request.app.state.scenarios.get(("scenario", sid), lambda: store.get(sid), keep=lambda s: s is not None)
    if s is None:
        raise HTTPException(404, f"no saved scenario {sid!r}: check the link")
    if not all(isinstance(s.results.get(k), dict) for k in RESULT_PARTS):
        store.mark_damaged(f"the results of scenario {sid!r} are damaged")
    return s


@router.post("", response_model=ScenarioCreated, status_code=201)
async def create_scenario(request: Request, body: ScenarioIn) -> dict:
    """Save a scenario: inputs as entered, results as computed now. Invalid inputs: 422, nothing stored."""
    s = await within_budget(request, save, _store(request), body.name, body.note, body.inputs, body.parent,
                            body.plan)
    return {"id": s.id, "link": _link(s.id)}


@router.get("", response_model=ScenarioList)
def list_scenarios(request: Request, q: str = Query("", max_length=200),
                   cursor: str | None = Query(None, max_length=200, description=(
                       "The `next` or `previous` value of a list answer: the page after (older) or before "
                       "(newer) it; `oldest` for the oldest page. Every page costs the same.")),
                   page: int | None = Query(None, ge=1, le=100000, description=(
                       "A page number (20 a page): deep pages cost more than `cursor`. Ignored with a cursor."))):
    """Saved scenarios, newest first, 20 a page; q finds scenarios whose name, note or summary words
    (what limits the cycle, the feed mode) contain q as typed (three characters or more), or a word
    beginning with q (one or two characters). Page on with `next` / `previous`. A search counts
    its matches up to 5,000: beyond, `total_exact` is false and more than `total` match."""
    _listing_allowed(request)
    found = _list(request, q, cursor, page)
    if not (page is not None and page > 1 and not cursor):
        page = None if cursor else 1
    return {"items": [_item(s) for s in found.items], "page": page,
            "pages": max(1, math.ceil(found.total / PER_PAGE)), "total": found.total, "total_exact": found.exact,
            "first": found.start, "q": q, "next": found.next, "previous": found.previous}


def _list(request: Request, q: str, cursor: str | None, page: int | None):
    """A page of the list: by cursor (or the first), or by an old page number (offset)."""
    store = _store(request)
    if cursor == OLDEST_LINK:
        cursor = OLDEST.encode()
    if page is not None and page > 1 and not cursor:
        return store.search(q.strip(), page, PER_PAGE)
    return store.page(q.strip(), _cursor(cursor), PER_PAGE)


@router.get("/{sid:scenario_id}", response_model=ScenarioOut)
def get_scenario(request: Request, sid: str) -> dict:
    return _out(request, _get_or_404(request, sid))


@router.post("/import", response_model=ScenarioCreated, status_code=201, openapi_extra={"requestBody": {"content": {
    "application/json": {"schema": {"type": "object", "required": ["inputs"], "properties": {
        "name": {"type": "string"}, "note": {"type": "string"},
        "inputs": {"$ref": "#/components/schemas/CycleRequest"}}}},
    "multipart/form-data": {"schema": {"type": "object", "required": ["file"],
                                       "properties": {"file": {"type": "string", "format": "binary"}}}},
}}})
async def import_scenario(request: Request, file: UploadFile | None = None) -> dict:
    """A scenario file exported from presscycle (or any JSON with name and inputs) becomes a new scenario."""
    raw = await read_upload(request, file, MAX_IMPORT_BYTES)
    try:
        data = json.loads(raw.decode("utf-8-sig"))
    except RecursionError:
        raise InputError([(("body",), "the file is nested too deeply to be a scenario")]) from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError([(("body",), f"the file is not JSON: {exc.__class__.__name__}")]) from None
    if not isinstance(data, dict) or not isinstance(data.get("inputs"), dict):
        raise InputError([(("body", "inputs"), "a scenario file needs an inputs object (an /api/v1/cycle request)")])
    name = str(data.get("name") or "").strip()[:120] or "Imported scenario"  # a blank name too: one to link to
    note = str(data.get("note") or "")[:2000]
    plan = data.get("plan") if isinstance(data.get("plan"), dict) else None
    s = await within_budget(request, save, _store(request), name, note, data["inputs"], None, plan)
    return {"id": s.id, "link": _link(s.id)}


# ---- pages -----------------------------------------------------------------------------------


def _templates(request: Request):
    return request.app.state.templates


@pages.get("/s/{sid}.json")
def scenario_json(request: Request, sid: str):
    s = _get_or_404(request, sid)
    return JSONResponse(_out(request, s), headers={"content-disposition": f'inline; filename="presscycle-{sid}.json"'})


#: The best cycle's filtration curves in the CSV: (heading, stored key, display quantity).
CURVE_COLUMNS = [("Time", "time", "time"), ("Filtrate volume", "filtrate_volume", "volume"),
                 ("Pressure", "pressure", "pressure"), ("Filtrate flow", "flow", "flow"),
                 ("Cake thickness per face", "cake_thickness", "thickness")]


@pages.get("/s/{sid}/curves.csv")
def scenario_csv(request: Request, sid: str, units: UnitSystem = "si"):
    """The best cycle's filtration curves in the display units chosen, 6 significant figures."""
    s = _get_or_404(request, sid)
    drawn = _redrawn(request, s)
    if drawn.series_from is None:
        raise HTTPException(409, "this solver version refuses the inputs of this scenario, and its curves are "
                                 "recomputed from them: open the scenario to see why")
    c = drawn.results["curves"]
    u = Units(units)
    buf = io.StringIO()
    w = csv.writer(buf)
    w.writerow([f"{head} [{u.label(q)}]" for head, _, q in CURVE_COLUMNS])
    for row in zip(*(u(q, c[key]) for _, key, q in CURVE_COLUMNS), strict=True):
        w.writerow([f"{float(x):.6g}" for x in row])
    return Response(buf.getvalue(), media_type="text/csv; charset=utf-8",
                    headers={"content-disposition": f'attachment; filename="presscycle-{sid}-curves-{units}.csv"'})


@pages.get("/s/{sid}", response_class=HTMLResponse)
def scenario_page(request: Request, sid: str, units: UnitSystem = "si"):
    s = _get_or_404(request, sid)
    u = Units(units)
    drawn = _redrawn(request, s)

    def rendered():
        html, figures = render_results(_templates(request), drawn.results, drawn.results.get("chart_series"), u,
                                       chart_results=drawn.chart_results, plan_link=f"/s/{sid}/plan")
        return html, page_json(figures)

    results_html, figures = request.app.state.pages.get(("saved page", sid, units, solver.SOLVER_VERSION), rendered)
    parent = _store(request).get(s.parent) if s.parent else None
    return _templates(request).TemplateResponse(request, "scenario_view.html", {
        "s": s, "u": u, "units": units, "results_html": results_html, "parent": parent,
        "figures": figures, "changed": drawn.changed, "series_from": drawn.series_from,
        "current_version": solver.SOLVER_VERSION, "inputs_json": json.dumps(s.inputs, indent=1, ensure_ascii=False),
        "input_rows": input_rows(s.inputs), "plan_inputs": s.results.get("plan_inputs"),
        "plan_json": json.dumps(s.results.get("plan_inputs"), indent=1, ensure_ascii=False),
    })


@pages.get("/s/{sid}/copy", response_class=HTMLResponse)
def scenario_copy(request: Request, sid: str):
    from .pages import editor_page

    s = _get_or_404(request, sid)
    return editor_page(request, f"Copy of {s.name}", f"Edit and save as a new scenario; {s.name!r} stays as it is.",
                       s.inputs, solve=True, parent=s, plan_link=f"/s/{sid}/plan")


def _listable(store, items: list[Listed]) -> list[Listed]:
    """The list shows each scenario's summary figures: a summary without them is damage."""
    for s in items:
        figures = [s.summary.get(k) for k in ("chamber_thickness", "filtration_time", "cycle_time",
                                               "filtrate_throughput", "solids_throughput")]
        if not all(isinstance(v, int | float) and not isinstance(v, bool) for v in figures):
            store.mark_damaged(f"the summary of scenario {s.id!r} is damaged")
    return items


@pages.get("/scenarios", response_class=HTMLResponse)
def scenarios_page(request: Request, q: str = Query("", max_length=200),
                   cursor: str | None = Query(None, max_length=200), page: int | None = Query(None, ge=1, le=100000)):
    _listing_allowed(request)
    found = _list(request, q, cursor, page)  # an old page-number link is still answered
    return _templates(request).TemplateResponse(request, "scenarios.html", {
        "items": _listable(_store(request), found.items), "q": q, "found": found, "u": Units("si"),
        "next": found.next, "previous": found.previous, "first": bool(cursor or page),
        "oldest": OLDEST_LINK if found.next else None, "per_page": PER_PAGE,
    })


@pages.get("/compare", response_class=HTMLResponse)
def compare_page(request: Request, ids: str = Query("", max_length=400), units: UnitSystem = "si"):
    wanted = [i for i in ids.replace(" ", "").split(",") if i]
    if not 2 <= len(wanted) <= 4:
        raise HTTPException(400, "pick two to four scenarios to compare")
    scenarios = [_get_or_404(request, i) for i in wanted]
    u = Units(units)
    rows = _input_rows(scenarios)
    return _templates(request).TemplateResponse(request, "compare.html", {
        "scenarios": scenarios, "rows": rows, "u": u, "units": units, "ids": ",".join(wanted),
        "figure_rows": _figure_rows(scenarios),
        "figures": request.app.state.pages.get(
            ("compare", tuple(wanted), units, solver.SOLVER_VERSION),
            lambda: page_json(compact(overlay(_drawable(request, scenarios), u)))),
        "cautions": CAUTIONS,
    })


def _drawable(request: Request, scenarios: list[Scenario]) -> list[tuple[str, dict]]:
    """(name, results with chart series) of the compared scenarios a chart can be drawn for."""
    out = []
    for s in scenarios:
        drawn = _redrawn(request, s)
        if drawn.chart_results is not None:
            out.append((s.name, {**drawn.chart_results, "chart_series": drawn.results["chart_series"]}))
    return out


#: the best cycle's figures a comparison shows: (label, display quantity, results key); the
#: stages after filtration and the discharge figures only when a compared scenario has them, the
#: downtime always, so each column's times add up to its cycle time
_FIGURE_ROWS = [("Filling time", "time", "fill_time", "any"), ("Filtration time", "time", "filtration_time", None),
                ("Wash time", "time", "wash_time", None), ("Squeeze time", "time", "squeeze_time", "any"),
                ("Blow time", "time", "blow_time", "any"), ("Downtime", "time", "downtime", None),
                ("Cycle time", "time", "cycle_time", None), ("Filtrate per cycle", "volume", "filtrate_volume", None),
                ("Dry cake per cycle", "mass", "dry_cake_mass", None),
                ("Cake thickness per face", "thickness", "cake_thickness", None),
                ("Cake moisture at discharge", "percent", "moisture", "given"),
                ("Solute removed by the wash", "percent", "solute_removal", "given"),
                ("Filtrate throughput", "flow", "filtrate_throughput", None),
                ("Dry solids throughput", "mass_rate", "solids_throughput", None)]


def _figure_rows(scenarios) -> list[tuple[str, str, str]]:
    bests = [s.results.get("best") or {} for s in scenarios]
    shown = []
    for label, quantity, key, when in _FIGURE_ROWS:
        if (when == "any" and not any(b.get(key) for b in bests)) or (
                when == "given" and all(b.get(key) is None for b in bests)):
            continue
        shown.append((label, quantity, key))
    return shown


def _input_rows(scenarios):
    return compare_rows([s.inputs for s in scenarios])
