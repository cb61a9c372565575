"""POST /api/v1/press-log: cake and cloth from the press's own cycles; the Press log page
(GET /press-log) and its partial update (POST /ui/press-log)."""

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from ..budget import within_budget
from ..forms import UNIT_CHOICES
from ..presslog import analyse
from ..presslogcharts import presslog_figures
from ..schemas.common import ERROR_RESPONSES
from ..schemas.presslog import PressLogRequest, PressLogResponse
from ..solve import CAUTIONS

router = APIRouter(tags=["press-log"], responses=ERROR_RESPONSES)
pages = APIRouter(tags=["pages"], include_in_schema=False)
#: The paths that take a whole plant log (Settings.max_log_bytes instead of max_body_bytes).
LOG_PATHS = ("/api/v1/press-log", "/ui/press-log")


@router.post("/api/v1/press-log", response_model=PressLogResponse)
async def post_press_log(request: Request, log_request: PressLogRequest) -> dict:
    """Fit alpha and R_m to every cycle of a plant log (the rate equation integrated against the
    logged pressure), their trends, the cloth's blinding and wash interval, and the plant's
    values against the scenario's; ``save`` keeps a calibrated copy of the scenario.

    The scenario (``scenario_id`` or inline ``inputs``) gives c, mu and the filter area.
    """
    return await within_budget(request, analyse, log_request, request.app.state.store)


@router.post("/ui/press-log", include_in_schema=False)
async def post_press_log_ui(request: Request, log_request: PressLogRequest) -> dict:
    results = await within_budget(request, analyse, log_request, request.app.state.store)
    figs = presslog_figures(results)
    html = request.app.state.templates.get_template("_presslog_results.html").render(
        {"results": results, "cautions": CAUTIONS, "figure_keys": list(figs)})
    # the page offers to save a calibrated copy only when the log gives one
    return {"html": html, "figures": figs, "saved": results["saved"],
            "calibrated": results["calibrated_inputs"] is not None}


@pages.get("/press-log", response_class=HTMLResponse)
def press_log_page(request: Request, scenario: str | None = None):
    """The Press log page; ``?scenario=<id>`` starts from a saved scenario."""
    return request.app.state.templates.TemplateResponse(request, "presslog.html", {
        "unit_choices": UNIT_CHOICES, "scenario_id": scenario or "", "cautions": CAUTIONS,
        "max_mb": request.app.state.settings.max_log_bytes // 1_000_000})
