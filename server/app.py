"""The ASGI app: ``server.app:app``, built by :func:`create_app`."""

from fastapi import FastAPI
from fastapi.staticfiles import StaticFiles
from fastapi.templating import Jinja2Templates

from . import errors
from .routers import cycle, pages
from .settings import PROJECT_ROOT, Settings, get_settings
from .solver import SOLVER_VERSION
from .views import register_filters


def create_app(settings: Settings | None = None) -> FastAPI:
    settings = settings or get_settings()
    app = FastAPI(
        title="presscycle",
        version=SOLVER_VERSION,
        description="Batch filter press cycles from lab filtration data. Quantities accept units.",
    )
    templates = Jinja2Templates(directory=PROJECT_ROOT / "templates")
    register_filters(templates.env)
    app.state.templates = templates
    app.state.settings = settings
    app.mount("/static", StaticFiles(directory=PROJECT_ROOT / "static"), name="static")
    app.include_router(cycle.router)
    app.include_router(pages.router)
    errors.install(app, templates)
    return app


app = create_app()
