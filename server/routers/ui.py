"""The pages' partial updates: POST /ui/results (the editor) and POST /ui/lab-fit (the lab page).

Each takes the same body as its API twin (/api/v1/cycle, /api/v1/lab-fit) and answers
{"html", "figures", "results"}. Bad input gets the API's 422, which the page marks at the fields.
"""

import json
from urllib.parse import quote

import orjson
from fastapi import APIRouter, Request, Response

from ..budget import within_budget
from ..display import Units, UnitSystem
from ..lab import compression_request, fit_request
from ..labcharts import compression_figures, lab_figures
from ..schemas.cycle import CycleRequest
from ..schemas.labfit import CompressionFitRequest, LabFitRequest
from ..solve import CAUTIONS, solve
from ..views import render_results

router = APIRouter(prefix="/ui", tags=["ui"], include_in_schema=False)


@router.post("/results")
async def post_results(request: Request, inputs: CycleRequest, units: UnitSystem = "si") -> dict:
    solved = await within_budget(request, solve, inputs, with_chart_series=True)
    html, figures = render_results(request.app.state.templates, solved.results, solved.chart_series, Units(units),
                                   inputs=inputs.raw)
    # encoded once, fast: the figures are most of the answer
    return Response(orjson.dumps({"html": html, "figures": figures, "results": solved.results},
                                 option=orjson.OPT_SERIALIZE_NUMPY),
                    media_type="application/json")


def scenario_prefill(result: dict) -> dict:
    """The lab result as editor inputs, in units people type (m/kg, bar, 1/m), with the standard
    errors and correlation for_cycle carries."""
    for_cycle = result["for_cycle"]
    cake = for_cycle["cake"]
    out = {
        "cake": {"resistance": f"{cake['resistance']:.4g} m/kg",
                 "reference_pressure": f"{cake['reference_pressure'] / 1e5:.4g} bar",
                 "compressibility": round(cake["compressibility"], 4),
                 "pressure_basis": cake["pressure_basis"]},
        "medium_resistance": f"{for_cycle['medium_resistance']:.4g} 1/m",
    }
    if cake.get("resistance_stderr"):
        out["cake"]["resistance_stderr"] = f"{cake['resistance_stderr']:.3g} m/kg"
    if cake.get("compressibility_stderr"):
        out["cake"]["compressibility_stderr"] = round(cake["compressibility_stderr"], 4)
    if for_cycle.get("medium_resistance_stderr"):
        out["medium_resistance_stderr"] = f"{for_cycle['medium_resistance_stderr']:.3g} 1/m"
    if for_cycle.get("resistance_medium_correlation") is not None:
        out["resistance_medium_correlation"] = round(for_cycle["resistance_medium_correlation"], 3)
    return out


def lab_part(request: Request, template: str, results: dict, figs: dict, prefill: dict | None = None) -> dict:
    """A lab page section's partial update: its results drawn by ``template`` with the cautions,
    its figures, and a link to a new scenario filled with ``prefill`` (part of a cycle request)."""
    context = {"results": results, "cautions": CAUTIONS, "figure_keys": list(figs)}
    if prefill is not None:
        context["scenario_link"] = "/scenario/new?prefill=" + quote(json.dumps(prefill))
    html = request.app.state.templates.get_template(template).render(context)
    return {"html": html, "figures": figs, "results": results}


@router.post("/lab-fit")
async def post_lab_fit(request: Request, lab_request: LabFitRequest) -> dict:
    results = await within_budget(request, fit_request, lab_request)
    return lab_part(request, "_lab_results.html", results, lab_figures(results), scenario_prefill(results))



@router.post("/compression-fit")
async def post_compression_fit(request: Request, compression: CompressionFitRequest) -> dict:
    results = await within_budget(request, compression_request, compression)
    return lab_part(request, "_lab_compression.html", results, compression_figures(results))
