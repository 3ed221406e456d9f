"""Server-rendered pages for people (Jinja2 templates in ``templates/``, CSS in ``service/web/static``).

Pages are a thin layer over the same use cases as the API (``service.services``): a handler reads
the form, calls one use case, and renders the result or the same form again with the problem
written next to the field. Every page works without JavaScript.

``install_pages(app)`` mounts the static files and includes every page router.
"""

from __future__ import annotations

from pathlib import Path

from fastapi import FastAPI
from fastapi.staticfiles import StaticFiles

from service.web.pages import _base

STATIC_DIR = Path(__file__).resolve().parents[1] / "static"


def install_pages(app: FastAPI) -> None:
    from service.web.pages import audit, decisions, instruments, lots, materials, measurements, work

    app.mount("/static", StaticFiles(directory=str(STATIC_DIR)), name="static")
    _base.install(app)
    for module in (work, lots, measurements, decisions, materials, instruments, audit):
        app.include_router(module.router)


__all__ = ["install_pages", "STATIC_DIR"]
