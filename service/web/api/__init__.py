"""The REST API for a lab information system, under ``/api/v1``.

A thin layer: each endpoint turns a request into one use-case call and the result into JSON.
`install_api(app)` adds the upload-size middleware and the routers; `create_app` calls it.
"""

from __future__ import annotations

from fastapi import APIRouter, FastAPI

from service.web.api.limits import UploadLimitMiddleware

PREFIX = "/api/v1"


def build_router() -> APIRouter:
    from service.web.api import audit, catalogue, evaluate, lots

    router = APIRouter(prefix=PREFIX)
    for module in (lots, evaluate, catalogue, audit):
        router.include_router(module.router)
    return router


def install_api(app: FastAPI) -> None:
    app.add_middleware(UploadLimitMiddleware, max_bytes=app.state.settings.max_upload_bytes, prefix="/api/")
    app.include_router(build_router())


__all__ = ["PREFIX", "build_router", "install_api"]
