"""One error shape for the whole app: JSON for /api/ paths, an error page otherwise.

422 bodies are {"detail": [{"loc": [...], "field": "a.b", "msg": "...", "type": "..."}]}
with plain-language messages; no traceback or exception text ever reaches the client.
Every mistake is worded by :func:`clean` whichever route meets it: a request body checked by
FastAPI, stored or imported inputs checked later (:meth:`InputError.from_validation`) and a
bad query on an HTML page (rendered as the error page, with the same words).
"""

import json
import logging

from fastapi import Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse, Response
from pydantic import ValidationError
from starlette.exceptions import HTTPException as StarletteHTTPException

from .schemas.cycle import FEED_MODES
from .schemas.quantities import bound_text
from .store import StorageError

log = logging.getLogger("presscycle")


class InputError(Exception):
    """Input that passed the schema but is impossible in combination (HTTP 422)."""

    def __init__(self, errors: list[tuple[tuple, str]]):
        super().__init__("; ".join(m for _, m in errors))
        self.errors = errors

    @classmethod
    def from_validation(cls, exc: ValidationError, prefix: tuple = ("body",)) -> "InputError":
        """A pydantic validation error of data checked after the request (stored or imported
        inputs), its paths under ``prefix``, worded as every other 422."""
        return cls([((*prefix, *c["loc"]), c["msg"]) for c in map(clean, exc.errors())])

    def within(self, prefix: tuple) -> "InputError":
        """The same errors, their paths moved under ``prefix`` (in place of the leading "body")."""
        return InputError([((*prefix, *[p for p in loc if p != "body"]), msg) for loc, msg in self.errors])


def allowed_methods(request: Request) -> str:
    """The methods some route serves at this path (one path may have a route per method):
    each method is tried against the app's routes, which is all a router exposes."""
    from starlette.routing import Match

    allowed = []
    for method in ("GET", "POST", "PUT", "PATCH", "DELETE"):
        probe = {**request.scope, "method": method}
        if any(route.matches(probe)[0] == Match.FULL for route in request.app.routes):
            allowed.append(method)
    return ", ".join(allowed)


_PLAIN = {
    "missing": "required",
    "extra_forbidden": "unknown field (check the spelling)",
    "union_tag_invalid": f"mode must be one of {', '.join(FEED_MODES)}",
    "union_tag_not_found": f"give mode: one of {', '.join(FEED_MODES)}",
}


def _field(loc) -> str:
    parts = [str(p) for p in loc if p != "body"]
    return ".".join(parts) if parts else "body"


def _n(x) -> str:
    """A limit as people write it, in the one spelling of bounds (quantities.bound_text): 24, not
    24.0 ("must be at most 24.0" read as more precise than meant: a plant-engineer check)."""
    return bound_text(x) if isinstance(x, float) else str(x)


#: The library's other messages in the tool's words (ctx holds the limits).
_WORDED = {
    "int_parsing": lambda c: "must be a whole number",
    "int_from_float": lambda c: "must be a whole number",
    "int_type": lambda c: "must be a whole number",
    "float_parsing": lambda c: "must be a number",
    "float_type": lambda c: "must be a number",
    "bool_type": lambda c: "must be true or false",
    "string_type": lambda c: "must be text",
    "string_too_short": lambda c: "must not be empty" if c.get("min_length") == 1 else
    f"must be at least {c.get('min_length')} characters",
    "string_too_long": lambda c: f"must be at most {c.get('max_length')} characters",
    "too_short": lambda c: f"give at least {c.get('min_length')} entries",
    "too_long": lambda c: f"give at most {c.get('max_length')} entries",
    "greater_than_equal": lambda c: f"must be at least {_n(c.get('ge'))}",
    "greater_than": lambda c: f"must be above {_n(c.get('gt'))}",
    "less_than_equal": lambda c: f"must be at most {_n(c.get('le'))}",
    "less_than": lambda c: f"must be below {_n(c.get('lt'))}",
    "literal_error": lambda c: f"must be one of {c.get('expected')}",
    "dict_type": lambda c: "must be an object",
    "model_type": lambda c: "must be an object",
    "model_attributes_type": lambda c: "must be an object",
    "list_type": lambda c: "must be a list",
    "tuple_type": lambda c: "must be a list",
    "json_invalid": lambda c: "the body is not valid JSON" + (f" ({c['error']})" if c.get("error") else ""),
}


#: optional groups of inputs whose own fields are required once the group is given: a missing
#: one says why ("required with an air blow"), not a bare "required" under a field marked optional
_GROUPS = {"blow": "an air blow", "squeeze": "a membrane squeeze", "wash_model": "a wash model",
           "wash_target": "a wash target", "cloth_wash": "a cloth wash", "cloth": "cloth wear",
           "downtime_parts": "the downtime from its parts"}


def clean(err: dict) -> dict:
    """One pydantic error in the app's words, with the path a person would write."""
    worded = _WORDED.get(err.get("type"))
    msg = _PLAIN.get(err.get("type")) or (worded(err.get("ctx") or {}) if worded else err.get("msg", "invalid"))
    loc_in = err.get("loc", ())
    if err.get("type") == "missing" and len(loc_in) >= 2 and loc_in[-2] in _GROUPS:
        msg = f"required with {_GROUPS[loc_in[-2]]}"
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    # Validators and the feed union add their own names to the path; people want fields.
    loc = [p for p in err.get("loc", ()) if not (isinstance(p, str) and (p.startswith("function-") or p in FEED_MODES))]
    return {"loc": loc, "field": _field(loc), "msg": msg, "type": err.get("type", "value_error")}


def _wants_json(request: Request) -> bool:
    """The JSON API and the pages' partial updates (/ui/) answer JSON; pages answer HTML."""
    path = request.url.path
    return path.startswith(("/api/", "/ui/")) or "application/json" in request.headers.get("accept", "")


def validation_payload(errors) -> dict:
    seen, out = set(), []
    for e in errors:
        c = clean(e)
        key = (c["field"], c["msg"])
        if key not in seen:
            seen.add(key)
            out.append(c)
    return {"detail": out}


def install(app, templates) -> None:
    """Register the app's exception handlers."""

    def _unprocessable(request: Request, errors):
        payload = validation_payload(errors)
        if _wants_json(request):
            return JSONResponse(payload, status_code=422)
        # on a page the query parameter's name is what the person sees in the address
        message = "; ".join(f"{d['field'].removeprefix('query.').removeprefix('path.')}: {d['msg']}"
                            for d in payload["detail"])
        return templates.TemplateResponse(
            request, "error.html", {"status": 422, "message": message}, status_code=422
        )

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError):
        return _unprocessable(request, exc.errors())

    @app.exception_handler(InputError)
    async def _input(request: Request, exc: InputError):
        return _unprocessable(request, [{"loc": list(loc), "msg": msg, "type": "value_error"}
                                        for loc, msg in exc.errors])

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException):
        message = exc.detail if isinstance(exc.detail, str) else "error"
        headers = getattr(exc, "headers", None)
        if exc.status_code == 405:
            headers = {**(headers or {}), "Allow": allowed_methods(request)}
        if _wants_json(request):
            return JSONResponse({"detail": message}, status_code=exc.status_code, headers=headers)
        return templates.TemplateResponse(
            request, "error.html", {"status": exc.status_code, "message": message},
            status_code=exc.status_code, headers=headers,
        )

    @app.exception_handler(StorageError)
    async def _storage(request: Request, exc: StorageError):
        # the database cannot take this request now: said in words, with its own status
        log.warning("storage: %s", exc)
        if _wants_json(request):
            return JSONResponse({"detail": str(exc)}, status_code=exc.status)
        return templates.TemplateResponse(
            request, "error.html", {"status": exc.status, "message": str(exc)}, status_code=exc.status
        )

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, exc: Exception):
        # reached only if the edge guard's own catch (below) did not answer first
        log.exception("unhandled error on %s", request.url.path)
        status, headers, body = unexpected_answer(templates, request.url.path, request.headers.get("accept", ""))
        return Response(body, status_code=status, headers=dict(headers))


def unexpected_answer(templates, path: str, accept: str) -> tuple[int, list, bytes]:
    """The 500 for an error nothing else handled: JSON for /api/ and /ui/, else the error page.

    The edge guard sends it itself and keeps the connection open (an exception that reached
    the server would make it drop a keep-alive connection without a word)."""
    message = "internal error: the problem has been logged"
    if path.startswith(("/api/", "/ui/")) or "application/json" in accept:
        return 500, [("content-type", "application/json")], json.dumps({"detail": message}).encode()
    html = templates.get_template("error.html").render({"status": 500, "message": message})
    return 500, [("content-type", "text/html; charset=utf-8")], html.encode()
