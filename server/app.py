"""The ASGI app, built by :func:`create_app` (``uvicorn --factory server.app:create_app``).

``server.app:app`` also works: the module builds the app from the environment's settings
the first time ``app`` is asked for, never on import, so importing this module opens no
database.
"""

import json
import logging

from fastapi import FastAPI
from fastapi.staticfiles import StaticFiles
from fastapi.templating import Jinja2Templates

from . import errors
from .guards import EdgeGuard, one_shot_receive
from .routers import cycle, health, labfit, pages, plan, presslog, scenarios, squeezefit, ui
from .routers.jsonbody import JSONBodyRoute
from .settings import PROJECT_ROOT, Settings
from .solver import SOLVER_VERSION
from .store import StorageError, open_store
from .units import warm_up
from .views import PageCache, register_filters

log = logging.getLogger("presscycle")


class CachedStatic(StaticFiles):
    """Static files; a URL with a content hash (?v=) may be cached for a year."""

    async def get_response(self, path, scope):
        response = await super().get_response(path, scope)
        if b"v=" in scope.get("query_string", b"") and response.status_code == 200:
            response.headers["cache-control"] = "public, max-age=31536000, immutable"
        return response


def create_app(settings: Settings | None = None) -> FastAPI:
    """The whole app for ``settings`` (default: from the environment, PRESSCYCLE_...)."""
    settings = settings or Settings()
    app = FastAPI(
        title="presscycle",
        version=SOLVER_VERSION,
        description=(f"Batch filter press cycles from lab filtration data. Quantities accept units. Limits: "
                     f"request bodies up to {settings.max_body_bytes:,} bytes (413 above; a press log up to "
                     f"{settings.max_log_bytes:,}); a calculation "
                     f"up to {settings.solve_seconds:g} s (503 above)."),
        # FastAPI's own /docs and /redoc load their scripts from a CDN; the plant intranet has
        # none, so /api renders the OpenAPI schema itself.
        docs_url=None,
        redoc_url=None,
        # the edge guard redirects a trailing slash itself, by a relative Location: the
        # framework's redirect would be built from the Host header
        redirect_slashes=False,
    )
    warm_up()  # pint's registry and the usual units at start-up, not in the first request
    templates = Jinja2Templates(directory=PROJECT_ROOT / "templates")
    register_filters(templates.env, PROJECT_ROOT / "static")
    app.state.templates = templates
    app.state.pages = PageCache(256)  # rendered parts, about 100 kB each
    app.state.scenarios = PageCache(64)  # parsed saved scenarios, a few hundred kB each
    app.openapi_schema = None  # built on first use, with the limits above
    app.state.settings = settings
    try:
        app.state.store = open_store(settings.db)
    except StorageError as exc:
        # a clear start-up error, not a traceback, and nothing written over
        raise SystemExit(f"presscycle cannot start: {exc}") from None
    app.router.on_shutdown.append(app.state.store.close)
    app.mount("/static", CachedStatic(directory=PROJECT_ROOT / "static"), name="static")
    app.include_router(health.router)
    app.include_router(cycle.router)
    app.include_router(labfit.router)
    app.include_router(squeezefit.router)
    app.include_router(plan.router)
    app.include_router(plan.pages)
    app.include_router(presslog.router)
    app.include_router(presslog.pages)
    app.include_router(ui.router)
    app.include_router(scenarios.router)
    app.include_router(scenarios.pages)
    app.include_router(pages.router)
    errors.install(app, templates)
    app.add_middleware(EdgeGuard, max_bytes=settings.max_body_bytes, body_timeout=settings.body_timeout,
                       on_error=lambda path, accept: errors.unexpected_answer(templates, path, accept),
                       allowed_hosts=settings.allowed_hosts,
                       path_limits={path: settings.max_log_bytes for path in presslog.LOG_PATHS},
                       direct=_served_at_the_edge(app, cycle.router))
    _warm(app, templates)
    return app


def _served_at_the_edge(app: FastAPI, *routers) -> dict:
    """The routes the edge guard answers itself once their body is read: the JSON-body routes of
    ``routers`` (POST /api/v1/cycle, where engineers wait: issue 12;
    routers/jsonbody.JSONBodyRoute.served_at_the_edge). Each stays in the app's router too: its
    OpenAPI entry, and its answer to any other method."""
    served = {("POST", route.path): route.served_at_the_edge(app) for router in routers for route in router.routes
              if isinstance(route, JSONBodyRoute) and route.methods == {"POST"}}
    if not served:  # a refactor that lost them would only be slower: say so at start-up
        raise RuntimeError("no JSON-body route found to serve at the edge")
    return served


#: How often each warm-up cycle request runs at start-up (a few milliseconds in all)
WARM_RUNS = 8

#: An invented scenario solved at start-up, so the first request pays no first-use costs.
_WARM_UP = {
    "slurry": {"solids_mass_fraction": 0.2, "solids_density": 2600.0, "viscosity": 1.0e-3},
    "cake": {"resistance": 1.0e11, "wet_to_dry_ratio": 1.6}, "medium_resistance": 5.0e10,
    "press": {"filter_area": 50.0, "chamber_thickness": 0.04},
    "feed": {"mode": "pump_curve", "points": [[0.0, 7e5], [0.02, 1e5]]},
    "cycle": {"downtime": 1200.0, "end": {"criterion": "flow", "flow_fraction": 0.2}},
    "compare_thicknesses": [0.03],
}


def _warm(app: FastAPI, templates) -> None:
    """First-use costs paid at start-up: the middleware stack and the page templates now; a
    solve, its chart series and the results pane once the server runs (below)."""
    app.middleware_stack = app.build_middleware_stack()
    for name in ("scenario.html", "scenario_view.html", "home.html", "compare.html", "scenarios.html", "error.html"):
        templates.get_template(name)
    host = (app.state.settings.allowed_hosts or ["localhost"])[0].encode()
    body = json.dumps(_WARM_UP).encode()
    # a compressible cake at constant pressure on the cake basis (the default), the press given by
    # its plates, a thickness comparison and a production target: the common paths of a request
    held = json.dumps({**_WARM_UP, "cake": {**_WARM_UP["cake"], "compressibility": 0.3, "reference_pressure": "6 bar"},
                       "feed": {"mode": "constant_pressure", "pressure": "6 bar"},
                       "press": {"plate_face_area": "1 m^2", "chambers": 25, "chamber_thickness": "40 mm"},
                       "cycle": {"downtime": "20 min"}, "compare_thicknesses": ["30 mm", "40 mm", "50 mm"],
                       "target": {"solids_throughput": "100 t/day", "hours_per_day": 20}}).encode()

    async def warm_request():
        # once the server runs: the two calculating routes through the whole app (worker
        # thread, routing, validation, solve, chart series, rendering), answered to nobody. The
        # cycle requests a few times over: the interpreter specialises a function's code after
        # a few runs of it, and until then a request costs up to twice as much (measured)
        for path, payload, times in (("/api/v1/cycle", body, WARM_RUNS), ("/ui/results", body, 1),
                                     ("/api/v1/cycle", held, WARM_RUNS)):
            for _ in range(times):
                status = await _asgi_request(app, "POST", path, payload, host)
                if status != 200:  # a warm-up that stopped working says so (the app still serves)
                    log.warning("warm-up request to %s answered %s", path, status)
                    break

    app.router.on_startup.append(warm_request)


async def _asgi_request(app, method: str, path: str, body: bytes, host: bytes) -> int | None:
    scope = {"type": "http", "asgi": {"version": "3.0"}, "http_version": "1.1", "method": method,
             "scheme": "http", "path": path, "raw_path": path.encode(), "query_string": b"", "root_path": "",
             "headers": [(b"host", host), (b"content-type", b"application/json"),
                         (b"content-length", str(len(body)).encode())],
             "client": ("127.0.0.1", 0), "server": ("127.0.0.1", 0)}
    async def disconnected():
        return {"type": "http.disconnect"}

    status = []

    async def send(message):
        if message["type"] == "http.response.start":
            status.append(message["status"])

    await app(scope, one_shot_receive(body, disconnected), send)
    return status[0] if status else None


def __getattr__(name: str):
    # ``server.app:app`` for uvicorn without --factory: built on first use, not on import
    if name == "app":
        global app
        app = create_app()
        return app
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
