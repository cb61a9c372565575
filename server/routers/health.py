"""GET /healthz: a cheap liveness answer for load balancers, and the benchmarks' floor."""

from fastapi import APIRouter
from pydantic import BaseModel

from ..solver import SOLVER_VERSION

router = APIRouter(tags=["health"])


class Health(BaseModel):
    status: str
    version: str


@router.get("/healthz", response_model=Health)
async def healthz() -> dict:
    """The server answers: no database query, no calculation."""
    return {"status": "ok", "version": SOLVER_VERSION}
