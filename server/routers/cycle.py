"""POST /api/v1/cycle: solve one press cycle scenario."""

from fastapi import APIRouter

from ..schemas.common import ERROR_RESPONSES
from ..schemas.cycle import CycleRequest, CycleResponse
from ..solve import solve_results

router = APIRouter(prefix="/api/v1", tags=["cycle"], responses=ERROR_RESPONSES)


@router.post("/cycle", response_model=CycleResponse)
def post_cycle(inputs: CycleRequest) -> dict:
    """Best feasible cycle, unconstrained optimum, chambers-full cycle and thickness comparison.

    Quantities may be SI numbers or strings with units; results are SI (see ``units``).
    """
    return solve_results(inputs)
