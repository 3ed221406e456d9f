"""Application factory: wires settings, database, templates, routes and the error table."""

from __future__ import annotations

from pathlib import Path

from fastapi import FastAPI, Request
from fastapi.responses import JSONResponse
from fastapi.templating import Jinja2Templates
from sqlalchemy import text

from service import __version__
from service.config import Settings, get_settings
from service.store.engine import make_engine
from service.store.migrations import current_revision, ensure_at_head, head_revision
from service.web.api import install_api
from service.web.auth import public
from service.web.errors import install_error_handlers
from service.web.guard import app_dependencies, install_security

TEMPLATES_DIR = Path(__file__).resolve().parents[2] / "templates"

CAUTION = (
    "A computed result is advice to the quality unit, not a release. "
    "Local procedures, the applicable pharmacopoeia and licensed practice govern the decision."
)


def create_app(settings: Settings | None = None, *, check_migrations: bool = True) -> FastAPI:
    settings = settings or get_settings()
    engine = make_engine(settings.database_url)
    if check_migrations:
        ensure_at_head(engine, settings.database_url)

    app = FastAPI(
        title="Bandgate",
        version=__version__,
        description="Identity testing of incoming raw-material lots by mid-IR spectroscopy. " + CAUTION,
        openapi_url="/api/v1/openapi.json",
        docs_url="/api/v1/docs",
        redoc_url=None,
        dependencies=app_dependencies(),  # every route must declare its action (docs/security.md)
    )
    app.state.settings = settings
    app.state.engine = engine
    templates = Jinja2Templates(directory=str(TEMPLATES_DIR))
    templates.env.globals.update(version=__version__, caution=CAUTION)
    app.state.templates = templates
    install_error_handlers(app)
    install_security(app)
    install_api(app)
    from service.web.pages import install_pages

    install_pages(app)

    @app.get("/healthz", tags=["operations"], dependencies=[public()])
    def healthz() -> dict[str, str]:
        """Liveness: the process answers."""
        return {"status": "ok", "version": __version__}

    @app.get("/readyz", tags=["operations"], dependencies=[public()])
    def readyz(request: Request) -> JSONResponse:
        """Readiness: the database answers and its schema is at the head migration."""
        try:
            with engine.connect() as conn:
                conn.execute(text("SELECT 1"))
            current = current_revision(engine)
        except Exception as exc:  # noqa: BLE001 - readiness reports, never raises
            return JSONResponse(
                {"status": "unavailable", "database": "unreachable", "detail": type(exc).__name__},
                status_code=503,
            )
        head = head_revision(settings.database_url)
        ok = current == head
        return JSONResponse(
            {"status": "ok" if ok else "unavailable", "database": "ok", "migration": current, "head": head},
            status_code=200 if ok else 503,
        )

    return app
