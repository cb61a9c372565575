"""A route whose JSON body is parsed and validated in one short step (issue 12).

FastAPI's generic handler reads a route's body through its dependency machinery: the content
type parsed with the e-mail package, the endpoint's context worked out, the body decoded,
then validated field by field against the route's parameters. On the cycle endpoint that
machinery cost about as much as the whole constant-pressure solve. :class:`JSONBodyRoute`
keeps everything FastAPI derives from the endpoint's signature (the OpenAPI schema of the
body and the answer, the route's name and tags) and replaces only the handler:

- the body, already read in full by the edge guard (server/guards.py, which also answered a
  415 to any media type but JSON), is decoded to what ``json.loads`` gives, as FastAPI
  decodes it (:func:`read_json`), then validated by the body model (``model_validate``,
  python mode: the same rules as before);
- a body that is not JSON, missing, or fails the model raises the same
  ``RequestValidationError`` FastAPI raises (paths under "body"), so the app's one error
  handler (server/errors.py) words it as every other 422;
- the endpoint is awaited on the event loop with ``(request, body_model)`` and returns the
  Response it builds (a cycle answer is serialised once, by the solve);
- :meth:`JSONBodyRoute.served_at_the_edge` gives the same parse and endpoint to the edge guard,
  which answers the route as soon as it has read the body (server/app.py wires it).

Use it for an endpoint ``async def f(request: Request, inputs: Model) -> Response`` only: it
refuses any other signature at start-up rather than mis-handle it.
"""

import json

import orjson
from fastapi import Request
from fastapi.exceptions import RequestValidationError
from fastapi.routing import APIRoute
from pydantic import BaseModel, ValidationError


class JSONBodyRoute(APIRoute):
    """An APIRoute for ``async def f(request, inputs: Model)`` that validates the JSON body directly."""

    def get_route_handler(self):
        dependant = self.dependant
        if (len(dependant.body_params) != 1 or dependant.query_params or dependant.path_params
                or dependant.header_params or dependant.cookie_params or dependant.dependencies):
            raise TypeError(f"JSONBodyRoute serves f(request, inputs: Model) only; {self.path} has other parameters")
        field = dependant.body_params[0]
        model = field.field_info.annotation
        if not (isinstance(model, type) and issubclass(model, BaseModel)):
            raise TypeError(f"JSONBodyRoute: the body of {self.path} must be one pydantic model")
        endpoint, name = self.endpoint, field.name
        request_name = dependant.request_param_name

        async def answer(request: Request, body: bytes):
            inputs = parse_body(model, body)
            kwargs = {name: inputs}
            if request_name:
                kwargs[request_name] = request
            return await endpoint(**kwargs)

        async def handler(request: Request):
            return await answer(request, await request.body())

        self._answer = answer
        return handler

    def served_at_the_edge(self, app):
        """This route as the edge guard serves it (server/guards.py, ``direct``): the body the
        guard has read is answered by the same parse and endpoint as :meth:`get_route_handler`,
        past the framework's layers between the guard and the route (the exception and
        exit-stack middlewares, and route matching over every route: about 50 µs of a cycle
        request in process, issue 12). Its refusals are the same: an exception goes to
        the app's own handler for its class (server/errors.py), found as the framework finds it;
        one with no handler but the catch-all goes on up to the guard, which answers the 500
        as before."""
        answer, handlers = self._answer, app.exception_handlers

        async def serve(scope, receive, send, body: bytes):
            request = Request(scope, receive)
            try:
                response = await answer(request, body)
            except Exception as exc:
                handle = next((handlers[kind] for kind in type(exc).__mro__
                               if kind in handlers and kind is not Exception), None)
                if handle is None:
                    raise
                response = await handle(request, exc)
            await response(scope, receive, send)

        return serve


def read_json(body: bytes):
    """The body as Python data, as ``json.loads`` reads it: by orjson (strict JSON, about a
    quarter of the time: issue 12), and whatever orjson refuses by ``json.loads`` itself, so that
    what the standard library accepts beyond strict JSON (NaN, 1e400, integers past 64 bits,
    a byte-order mark) is read as before and a body that is not JSON gets its words. orjson
    keeps an integer whole only from -2^63 to 2^64 - 1 and reads one beyond as a float, where
    json.loads keeps it whole: a body with a run of 19 digits (every integer beyond has one:
    |n| >= 2^63 has 19 digits or more) is read by json.loads too."""
    if body.translate(_DIGITS_AS_NINES).find(_NINETEEN_NINES) < 0:  # a regular expression costs more
        try:
            return orjson.loads(body)
        except orjson.JSONDecodeError:
            pass
    return json.loads(body)


_DIGITS_AS_NINES = bytes.maketrans(b"0123456789", b"9" * 10)
_NINETEEN_NINES = b"9" * 19


def parse_body(model: type[BaseModel], body: bytes) -> BaseModel:
    """The request body as ``model``, or the RequestValidationError FastAPI would raise."""
    if not body:
        raise RequestValidationError([{"type": "missing", "loc": ("body",), "msg": "Field required", "input": None}])
    try:
        data = read_json(body)
    except (ValueError, RecursionError) as exc:  # JSONDecodeError and UnicodeDecodeError are ValueErrors
        # where, in words (FastAPI put the character's index in the path, shown as a field "11")
        if isinstance(exc, json.JSONDecodeError):
            where = f"{exc.msg.lower().removesuffix(' at')} at line {exc.lineno}, column {exc.colno}"
        elif isinstance(exc, UnicodeDecodeError):
            where = f"byte {exc.start + 1} is not UTF-8 text"
        elif isinstance(exc, RecursionError):
            where = "nested too deeply"
        else:  # an integer of thousands of digits, or another number Python will not read
            where = "a number too long to read"
        raise RequestValidationError(
            [{"type": "json_invalid", "loc": ("body",), "msg": "JSON decode error", "input": {},
              "ctx": {"error": where}}], body=body) from None
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        raise RequestValidationError([{**e, "loc": ("body", *e["loc"])} for e in exc.errors()], body=data) from None
