"""The one table that turns typed errors into responses.

Under ``/api/`` the answer is ``application/problem+json`` (RFC 9457); elsewhere an HTML page.
No stack trace ever reaches a client: unexpected exceptions are logged and answered 500 with
a generic message.
"""

from __future__ import annotations

import logging
from typing import Any

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import HTMLResponse, JSONResponse, Response
from starlette.exceptions import HTTPException as StarletteHTTPException

from service import errors as e

log = logging.getLogger("bandgate.web")

PROBLEM_BASE = "https://bandgate.invalid/problems/"

STATUS_BY_ERROR: dict[type[e.BandgateError], int] = {
    e.UnusableInput: 422,
    e.InvalidInput: 422,
    e.NotFound: 404,
    e.Conflict: 409,
    e.NotAuthenticated: 401,
    e.Forbidden: 403,
    e.PayloadTooLarge: 413,
    e.UnsupportedMediaType: 415,
    e.ServiceUnavailable: 503,
}


def status_for(exc: e.BandgateError) -> int:
    for cls in type(exc).__mro__:
        if cls in STATUS_BY_ERROR:
            return STATUS_BY_ERROR[cls]  # type: ignore[index]
    return 400


def _wants_problem(request: Request) -> bool:
    return request.url.path.startswith("/api/")


def problem_response(
    request: Request, *, status: int, code: str, title: str, detail: str, extra: dict[str, Any] | None = None
) -> Response:
    if _wants_problem(request):
        body: dict[str, Any] = {
            "type": PROBLEM_BASE + code,
            "title": title,
            "status": status,
            "detail": detail,
            "instance": request.url.path,
        }
        body.update(extra or {})
        headers = {"WWW-Authenticate": "Bearer"} if status == 401 else None
        return JSONResponse(body, status_code=status, media_type="application/problem+json", headers=headers)
    templates = getattr(request.app.state, "templates", None)
    if templates is not None:
        return templates.TemplateResponse(
            request,
            "error.html",
            {"status": status, "title": title, "detail": detail, "extra": extra or {}},
            status_code=status,
        )
    return HTMLResponse(f"<h1>{status} {title}</h1><p>{detail}</p>", status_code=status)


def install_error_handlers(app: FastAPI) -> None:
    @app.exception_handler(e.BandgateError)
    async def _typed(request: Request, exc: e.BandgateError) -> Response:
        extra = {"errors": [f.as_dict() for f in exc.fields]} if exc.fields else None
        return problem_response(
            request, status=status_for(exc), code=exc.code, title=exc.title, detail=exc.message, extra=extra
        )

    @app.exception_handler(RequestValidationError)
    async def _validation(request: Request, exc: RequestValidationError) -> Response:
        fields = []
        for err in exc.errors():
            loc = [str(p) for p in err.get("loc", ()) if p not in ("body", "query", "path", "header", "form")]
            fields.append({"path": ".".join(loc) or "request", "message": str(err.get("msg", "invalid"))})
        detail = "; ".join(f"{f['path']}: {f['message']}" for f in fields) or "the request is not valid"
        return problem_response(
            request, status=422, code="invalid-input", title="Input is not valid", detail=detail,
            extra={"errors": fields},
        )

    @app.exception_handler(StarletteHTTPException)
    async def _http(request: Request, exc: StarletteHTTPException) -> Response:
        titles = {404: "Not found", 405: "Method not allowed", 401: "Authentication required", 403: "Not allowed"}
        title = titles.get(exc.status_code, "Request could not be completed")
        code = title.lower().replace(" ", "-")
        detail = exc.detail if isinstance(exc.detail, str) else title
        if exc.status_code == 404 and detail == "Not Found":
            detail = f"there is nothing at {request.url.path}; check the address"
        return problem_response(request, status=exc.status_code, code=code, title=title, detail=detail)

    @app.exception_handler(Exception)
    async def _unexpected(request: Request, exc: Exception) -> Response:
        log.exception("unexpected error on %s %s", request.method, request.url.path)
        return problem_response(
            request, status=500, code="internal", title="Internal error",
            detail="the server could not complete the request; nothing was recorded for it. "
            "Try again, and report the time to the administrator if it persists",
        )
