"""POST /api/v1/squeeze-fit (C_e, creep and the squeezed cake from a lab squeeze test) and its
page twin POST /ui/squeeze-fit (the lab page's Squeeze test section: html, figures, results)."""

from fastapi import APIRouter, Request

from ..budget import within_budget
from ..labcharts import squeeze_figures
from ..schemas.common import ERROR_RESPONSES
from ..schemas.squeezefit import SqueezeFitRequest, SqueezeFitResponse
from ..squeezelab import scenario_prefill, squeeze_request
from .ui import lab_part

router = APIRouter(tags=["squeeze-fit"], responses=ERROR_RESPONSES)


@router.post("/api/v1/squeeze-fit", response_model=SqueezeFitResponse)
async def post_squeeze_fit(request: Request, squeeze: SqueezeFitRequest) -> dict:
    """Fit the Terzaghi–Voigt squeeze to a lab piston-press test: C_e, creep fraction and rate,
    equilibrium thickness and porosity; ``for_cycle`` is the ``cycle.squeeze`` of a cycle request.

    Quantities accept unit strings ("6 bar", "58 g", "2650 kg/m^3", "50 cm^2", "10.2 mm").
    """
    return await within_budget(request, squeeze_request, squeeze)


@router.post("/ui/squeeze-fit", include_in_schema=False)
async def post_squeeze_fit_page(request: Request, squeeze: SqueezeFitRequest) -> dict:
    results = await within_budget(request, squeeze_request, squeeze)
    return lab_part(request, "_lab_squeeze.html", results, squeeze_figures(results), scenario_prefill(results))
