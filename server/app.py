"""The ASGI app, built by :func:`create_app` (``uvicorn --factory server.app:create_app``).

``server.app:app`` also works: the module builds the app from the environment's settings
the first time ``app`` is asked for, never on import, so importing this module opens no
database.
"""

from fastapi import FastAPI
from fastapi.staticfiles import StaticFiles
from fastapi.templating import Jinja2Templates

from . import errors
from .guards import EdgeGuard
from .routers import cycle, health, labfit, pages, scenarios, ui
from .settings import PROJECT_ROOT, Settings
from .solver import SOLVER_VERSION
from .storage import SqliteStore, StorageError
from .units import warm_up
from .views import PageCache, register_filters


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
                     f"request bodies up to {settings.max_body_bytes:,} bytes (413 above); a calculation "
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
    app.state.pages = PageCache()
    app.openapi_schema = None  # built on first use, with the limits above
    app.state.settings = settings
    try:
        app.state.store = SqliteStore(settings.db)
    except StorageError as exc:
        # a clear start-up error, not a traceback, and nothing written over
        raise SystemExit(f"presscycle cannot start: {exc}") from None
    app.mount("/static", CachedStatic(directory=PROJECT_ROOT / "static"), name="static")
    app.include_router(health.router)
    app.include_router(cycle.router)
    app.include_router(labfit.router)
    app.include_router(ui.router)
    app.include_router(scenarios.router)
    app.include_router(scenarios.pages)
    app.include_router(pages.router)
    errors.install(app, templates)
    app.add_middleware(EdgeGuard, max_bytes=settings.max_body_bytes, body_timeout=settings.body_timeout,
                       on_error=lambda path, accept: errors.unexpected_answer(templates, path, accept),
                       allowed_hosts=settings.allowed_hosts)
    return app


def __getattr__(name: str):
    # ``server.app:app`` for uvicorn without --factory: built on first use, not on import
    if name == "app":
        global app
        app = create_app()
        return app
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
