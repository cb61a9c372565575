"""POST /ui/results: the editor's partial update (results HTML and chart figures).

Takes the same body as /api/v1/cycle; answers {"html", "figures", "result"}. Bad input gets
the API's 422, which the page marks at the fields.
"""

from fastapi import APIRouter, Query, Request

from ..cases import CAUTIONS, solve_full
from ..charts import all_series, figures
from ..display import Units
from ..errors import InputError
from ..schemas.cycle import CycleRequest

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


__all__ = ["router", "InputError"]
