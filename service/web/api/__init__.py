"""The REST API for a lab information system, under ``/api/v1``.

A thin layer: each endpoint turns a request into one use-case call and the result into JSON.
`install_api(app)` adds the upload-size middleware, the routers and the bearer scheme of the
OpenAPI document; `create_app` calls it.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, FastAPI

from service.web.api.limits import UploadLimitMiddleware

PREFIX = "/api/v1"
# Multipart framing and the small form fields around a file: the file itself may be as large as
# BANDGATE_MAX_UPLOAD_BYTES; the body may exceed that by this much.
MULTIPART_ALLOWANCE = 256 * 1024


def build_router() -> APIRouter:
    from service.web.api import audit, catalogue, evaluate, lots

    router = APIRouter(prefix=PREFIX)
    for module in (lots, evaluate, catalogue, audit):
        router.include_router(module.router)
    return router


def install_api(app: FastAPI) -> None:
    from service.services.api_requests import watch
    from service.web.api.access import BEARER_SCHEME

    settings = app.state.settings
    app.add_middleware(UploadLimitMiddleware, max_bytes=settings.max_upload_bytes + MULTIPART_ALLOWANCE,
                       file_limit=settings.max_upload_bytes, prefix="/api/")
    app.include_router(build_router())
    watch(app.state.engine)  # binds idempotency keys to the use cases' commits

    _start_notices_with_the_server(app)

    original = app.openapi

    def openapi() -> dict[str, Any]:
        if app.openapi_schema is None:
            doc = original()
            doc.setdefault("components", {}).setdefault("securitySchemes", {})["bearer"] = BEARER_SCHEME
            app.openapi_schema = doc
        return app.openapi_schema

    app.openapi = openapi  # type: ignore[method-assign]


def _start_notices_with_the_server(app: FastAPI) -> None:
    """Run the notice dispatcher while the server runs (lifespan), not in every test app."""
    from contextlib import asynccontextmanager

    from service.services.notices import Dispatcher

    inner = app.router.lifespan_context

    @asynccontextmanager
    async def lifespan(a: Any):  # type: ignore[no-untyped-def]
        dispatcher = Dispatcher(app.state.engine)
        dispatcher.start()
        app.state.notices = dispatcher
        try:
            async with inner(a) as state:
                yield state
        finally:
            dispatcher.stop()

    app.router.lifespan_context = lifespan


__all__ = ["PREFIX", "build_router", "install_api"]
