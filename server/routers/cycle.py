"""POST /api/v1/cycle: solve one press cycle scenario."""

from fastapi import APIRouter, Request

from ..budget import within_budget
from ..schemas.common import ERROR_RESPONSES
from ..schemas.cycle import CycleRequest, CycleResponse
from ..solve import solve_results

router = APIRouter(prefix="/api/v1", tags=["cycle"], responses=ERROR_RESPONSES)


@router.post("/cycle", response_model=CycleResponse)
async def post_cycle(request: Request, inputs: CycleRequest) -> dict:
    """Best feasible cycle, unconstrained optimum, chambers-full cycle and thickness comparison.

    Quantities may be SI numbers or strings with units; results are SI (see ``units``).
    """
    return await within_budget(request, solve_results, inputs)
