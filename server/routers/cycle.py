"""POST /api/v1/cycle: solve one press cycle scenario."""

from fastapi import APIRouter, Request, Response

from ..budget import within_budget
from ..schemas.common import ERROR_RESPONSES
from ..schemas.cycle import CycleRequest, CycleResponse
from ..solve import solve

router = APIRouter(prefix="/api/v1", tags=["cycle"], responses=ERROR_RESPONSES)


@router.post("/cycle", response_model=CycleResponse)
async def post_cycle(request: Request, inputs: CycleRequest) -> dict:
    """Best feasible cycle, unconstrained optimum, chambers-full cycle and thickness comparison.

    Quantities may be SI numbers or strings with units; results are SI (see ``units``).
    """
    solved = await within_budget(request, solve, inputs, quick=inputs.solves_in_closed_form)
    # serialised once by the solve (and checked finite there); the schema above still
    # describes it, and the schema-driven tests check every answer against it
    return Response(solved.results_json, media_type="application/json")
