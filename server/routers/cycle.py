"""POST /api/v1/cycle: solve one press cycle scenario."""

from fastapi import APIRouter

from ..cases import solve_request
from ..schemas.cycle import CycleRequest, CycleResponse

router = APIRouter(prefix="/api/v1", tags=["cycle"])


@router.post("/cycle", response_model=CycleResponse)
def post_cycle(req: CycleRequest) -> dict:
    """Best feasible cycle, unconstrained optimum, chambers-full cycle and thickness comparison.

    Quantities may be SI numbers or strings with units; results are SI (see ``units``).
    """
    return solve_request(req)
