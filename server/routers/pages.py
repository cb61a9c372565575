"""HTML pages."""

from fastapi import APIRouter, HTTPException, Request
from fastapi.responses import HTMLResponse

from ..cases import CAUTIONS, solve_request
from ..demo import load_demo_cases
from ..errors import InputError
from ..schemas.cycle import CycleRequest
from ..settings import get_settings

router = APIRouter(tags=["pages"])


def _demos():
    return load_demo_cases(get_settings().demo_dir)


@router.get("/", response_class=HTMLResponse)
def home(request: Request):
    return request.app.state.templates.TemplateResponse(
        request, "home.html", {"demos": _demos(), "cautions": CAUTIONS}
    )


@router.get("/demo/{slug}", response_class=HTMLResponse)
def demo_case(request: Request, slug: str):
    demo = next((d for d in _demos() if d.slug == slug), None)
    if demo is None:
        raise HTTPException(404, f"no demo case named {slug!r}")
    try:
        results = solve_request(CycleRequest.model_validate(demo.inputs))
    except InputError as exc:
        raise HTTPException(500, f"demo case {slug!r} does not solve: {exc}") from None
    return request.app.state.templates.TemplateResponse(
        request, "demo.html", {"demo": demo, "r": results, "cautions": CAUTIONS}
    )
