"""POST /api/v1/cycle: solve one press cycle scenario."""

from fastapi import APIRouter, Request, Response

from ..budget import within_budget
from ..schemas.common import ERROR_RESPONSES
from ..schemas.cycle import CycleRequest, CycleResponse
from ..solve import solve
from .jsonbody import JSONBodyRoute

# the body is validated in one step and the answer sent as serialised by the solve (issue 12)
router = APIRouter(prefix="/api/v1", tags=["cycle"], responses=ERROR_RESPONSES, route_class=JSONBodyRoute)


def solves_quickly(inputs: CycleRequest) -> bool:
    """A constant-pressure feed solves in well under a millisecond on either pressure basis:
    in closed form (on the cake basis a power-law cake's too, with an incomplete beta part), or
    with local laws from one held-pressure table of fixed size (2,000 volumes, its optimum
    worked out on the table). Such a request runs at once on the event
    loop: the hop to a worker thread costs a good part of the request, the time budget cannot
    be reached, and the solver holds the interpreter in a thread as much as on the loop. A cycle
    with stages after filtration (squeeze, blow, wash quality, specifications) searches their
    free durations and goes to a worker thread under the time budget."""
    return (inputs.solves_in_closed_form or (inputs.feed.closed_form and not inputs.cycle.adds_stages)
            or pump_on_its_table(inputs))


#: a pump curve of at most this many points, compared at at most this many thicknesses, solves
#: on its table in about 1 ms (one core); the longest the schema allows take several times that
PUMP_POINTS_AT_ONCE = 200
THICKNESSES_AT_ONCE = 12


def pump_on_its_table(inputs: CycleRequest) -> bool:
    """A pump curve solved on its table in a bounded few milliseconds: the operating points on
    a grid of fixed size (the pump's own table of fixed size, the cake's law in closed form),
    the optimum worked out on the table with the wash at the end pressure (no scan), no stages
    after filtration, and none of the extra solves of an uncertainty range or a best cloth-wash
    interval; a curve of a few points and a short thickness comparison. Such a request runs on
    the event loop, as a closed form does."""
    c, k = inputs.cycle, inputs.cake
    wash = c.downtime_parts.cloth_wash if c.downtime_parts is not None else None
    return (inputs.feed.mode == "pump_curve" and len(inputs.feed.points) <= PUMP_POINTS_AT_ONCE
            and len(inputs.compare_thicknesses) <= THICKNESSES_AT_ONCE
            and not c.adds_stages and c.wash_pressure is None and k.local is None
            and not (k.resistance_stderr or k.compressibility_stderr or inputs.medium_resistance_stderr)
            and not (wash is not None and wash.every_cycles == "best"))


@router.post("/cycle", response_model=CycleResponse)
async def post_cycle(request: Request, inputs: CycleRequest) -> Response:
    """Best feasible cycle, unconstrained optimum, chambers-full cycle and thickness comparison.

    Quantities may be SI numbers or strings with units; results are SI (see ``units``).
    """
    solved = await within_budget(request, solve, inputs, quick=solves_quickly(inputs))
    # serialised once by the solve (and checked finite there); the schema above still
    # describes it, and the schema-driven tests check every answer against it
    return Response(solved.results_json, media_type="application/json")
