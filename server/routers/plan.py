"""POST /api/v1/plan: a production plan for a scenario."""

from fastapi import APIRouter, Request

from ..budget import within_budget
from ..plan import make_plan
from ..schemas.common import ERROR_RESPONSES
from ..schemas.plan import PlanRequest, PlanResponse

router = APIRouter(prefix="/api/v1", tags=["plan"], responses=ERROR_RESPONSES)


@router.post("/plan", response_model=PlanResponse)
async def post_plan(request: Request, plan: PlanRequest) -> dict:
    """Presses and chambers needed, whole cycles a shift, seasons, cloth washes, feed energy,
    and how sure the answer is (seeded Monte Carlo, sensitivity). Results are SI (see ``units``).
    """
    return await within_budget(request, make_plan, plan)
