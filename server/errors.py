"""One error shape for the whole app: JSON for /api/ paths, an error page otherwise.

422 bodies are {"detail": [{"loc": [...], "field": "a.b", "msg": "...", "type": "..."}]}
with plain-language messages; no traceback or exception text ever reaches the client.
"""

import logging

from fastapi import Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from starlette.exceptions import HTTPException as StarletteHTTPException

from .schemas.cycle import FEED_MODES

log = logging.getLogger("presscycle")


class InputError(Exception):
    """Input that passed the schema but is impossible in combination (HTTP 422)."""

    def __init__(self, errors: list[tuple[tuple, str]]):
        super().__init__("; ".join(m for _, m in errors))
        self.errors = errors


_PLAIN = {
    "missing": "required",
    "extra_forbidden": "unknown field (check the spelling)",
    "union_tag_invalid": f"mode must be one of {', '.join(FEED_MODES)}",
    "union_tag_not_found": f"give mode: one of {', '.join(FEED_MODES)}",
}


def _field(loc) -> str:
    parts = [str(p) for p in loc if p != "body"]
    return ".".join(parts) if parts else "body"


def _clean(err: dict) -> dict:
    msg = _PLAIN.get(err.get("type"), err.get("msg", "invalid"))
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    # Validators and the feed union add their own names to the path; people want fields.
    loc = [p for p in err.get("loc", ()) if not (isinstance(p, str) and (p.startswith("function-") or p in FEED_MODES))]
    return {"loc": loc, "field": _field(loc), "msg": msg, "type": err.get("type", "value_error")}


def _wants_json(request: Request) -> bool:
    return request.url.path.startswith("/api/") or "application/json" in request.headers.get(
        "accept", ""
    )


def validation_payload(errors) -> dict:
    seen, out = set(), []
    for e in errors:
        c = _clean(e)
        key = (c["field"], c["msg"])
        if key not in seen:
            seen.add(key)
            out.append(c)
    return {"detail": out}


def install(app, templates) -> None:
    """Register the app's exception handlers."""

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError):
        return JSONResponse(validation_payload(exc.errors()), status_code=422)

    @app.exception_handler(InputError)
    async def _input(request: Request, exc: InputError):
        errs = [{"loc": list(loc), "msg": msg, "type": "value_error"} for loc, msg in exc.errors]
        return JSONResponse(validation_payload(errs), status_code=422)

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException):
        message = exc.detail if isinstance(exc.detail, str) else "error"
        if _wants_json(request):
            return JSONResponse({"detail": message}, status_code=exc.status_code)
        return templates.TemplateResponse(
            request, "error.html", {"status": exc.status_code, "message": message},
            status_code=exc.status_code,
        )

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, exc: Exception):
        log.exception("unhandled error on %s", request.url.path)
        message = "internal error: the problem has been logged"
        if _wants_json(request):
            return JSONResponse({"detail": message}, status_code=500)
        return templates.TemplateResponse(
            request, "error.html", {"status": 500, "message": message}, status_code=500
        )
