"""POST /ui/results: the editor's partial update (results HTML and chart figures).

Takes the same body as /api/v1/cycle; answers {"html", "figures", "result"}. Bad input gets
the API's 422, which the page marks at the fields.
"""

import json
from urllib.parse import quote

from fastapi import APIRouter, Query, Request

from ..cases import CAUTIONS, solve_full
from ..charts import all_series, figures
from ..display import Units
from ..labcharts import lab_figures
from ..labfits import fit_request
from ..schemas.cycle import CycleRequest
from ..schemas.labfit import LabFitRequest

router = APIRouter(prefix="/ui", tags=["ui"], include_in_schema=False)


def results_context(solved, units: Units) -> dict:
    return {"r": solved.answer, "u": units, "cautions": CAUTIONS}


@router.post("/results")
def post_results(request: Request, req: CycleRequest, units: str = Query("si", pattern="^(si|us)$")) -> dict:
    solved = solve_full(req)
    u = Units(units)
    series = all_series(solved.model, solved.built.case, solved.solution)
    html = request.app.state.templates.get_template("_results.html").render(results_context(solved, u))
    return {"html": html, "figures": figures(series, solved.answer, u), "result": solved.answer}


def scenario_prefill(result: dict) -> dict:
    """The lab result as editor inputs, in units people type (m/kg, bar, 1/m), with standard errors."""
    for_cycle = result["for_cycle"]
    cake = for_cycle["cake"]
    out = {
        "cake": {"resistance": f"{cake['resistance']:.4g} m/kg",
                 "reference_pressure": f"{cake['reference_pressure'] / 1e5:.4g} bar",
                 "compressibility": round(cake["compressibility"], 4)},
        "medium_resistance": f"{for_cycle['medium_resistance']:.4g} 1/m",
    }
    tests = result["tests"]
    se_a = result["resistance_ref_stderr"] if len(tests) > 1 else tests[0]["resistance_stderr"]
    se_r = result["medium_resistance_spread"] if len(tests) > 1 else tests[0]["medium_resistance_stderr"]
    if se_a:
        out["cake"]["resistance_stderr"] = f"{se_a:.3g} m/kg"
    if se_r:
        out["medium_resistance_stderr"] = f"{se_r:.3g} 1/m"
    return out


@router.post("/lab-fit")
def post_lab_fit(request: Request, req: LabFitRequest) -> dict:
    result = fit_request(req)
    figs = lab_figures(result)
    link = "/scenario/new?prefill=" + quote(json.dumps(scenario_prefill(result)))
    html = request.app.state.templates.get_template("_lab_results.html").render(
        {"r": result, "cautions": CAUTIONS, "figure_keys": list(figs), "scenario_link": link})
    return {"html": html, "figures": figs, "result": result}

