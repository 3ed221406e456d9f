"""Install the security layer on the app: headers, body ceiling, route sealing, sign-in redirects.

`install_security(app)` is called once by `create_app`. It

* adds the security-header and body-limit middleware (``security_headers.py``);
* seals the routes on the first request: any route that declares no action (see ``auth.py``)
  is replaced by a handler that answers 403, so a forgotten declaration fails closed;
* sends a person who is not signed in (on a page, with GET) to ``/login?next=...`` and a person
  who must choose a new password to ``/account/password``; the API gets problem responses;
* mounts the sign-in, sign-out, password and people-administration pages.
"""

from __future__ import annotations

import logging
from typing import Any
from urllib.parse import quote

from fastapi import FastAPI, Request
from fastapi.responses import RedirectResponse, Response
from fastapi.routing import APIRoute
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from service.errors import NotAuthenticated
from service.web.auth import PasswordChangeRequired, declared_actions
from service.web.errors import problem_response
from service.web.security_headers import BodyLimitMiddleware, SecurityHeadersMiddleware

log = logging.getLogger("bandgate.security")

# Non-FastAPI routes the framework itself adds; open to everyone (the API description).
FRAMEWORK_PUBLIC_PATHS = frozenset({"/api/v1/openapi.json", "/api/v1/docs", "/api/v1/docs/oauth2-redirect",
                                    "/docs", "/docs/oauth2-redirect", "/openapi.json", "/redoc"})
MULTIPART_ALLOWANCE = 256 * 1024  # headers and form fields around an upload


async def _undeclared(scope: Any, receive: Any, send: Any) -> None:
    request = Request(scope, receive)
    response = problem_response(request, status=403, code="forbidden", title="Not allowed",
                                detail="this route declares no permission and is closed; "
                                       "report it to the administrator")
    await response(scope, receive, send)


def undeclared_routes(routes: list[Any], prefix: str = "") -> list[tuple[str, Any]]:
    """Routes (with their full path) that declare no action and are not framework-public."""
    out: list[tuple[str, Any]] = []
    for route in routes:
        if isinstance(route, APIRoute):
            if not declared_actions(route.dependant):
                out.append((prefix + route.path, route))
        elif isinstance(route, Mount):
            if isinstance(route.app, StaticFiles):
                continue
            inner = getattr(route.app, "routes", None)
            if inner is None:
                out.append((prefix + route.path, route))
            else:
                out.extend(undeclared_routes(list(inner), prefix + route.path))
        elif isinstance(route, Route):
            if prefix + route.path not in FRAMEWORK_PUBLIC_PATHS:
                out.append((prefix + route.path, route))
        else:
            out.append((prefix + getattr(route, "path", "?"), route))
    return out


def seal_routes(app: FastAPI) -> list[str]:
    """Close every undeclared route (answering 403); return their paths."""
    closed = []
    for path, route in undeclared_routes(list(app.routes)):
        route.app = _undeclared
        closed.append(path)
        log.warning("route %s declares no action: closed", path)
    return closed


class _SealOnFirstRequest:
    """Seals the routes when the first request arrives, after every router has been included."""

    def __init__(self, app: Any, *, fastapi_app: FastAPI) -> None:
        self.app = app
        self.fastapi_app = fastapi_app
        self.sealed = False

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        if not self.sealed and scope["type"] == "http":
            seal_routes(self.fastapi_app)
            self.sealed = True
        await self.app(scope, receive, send)


def install_security(app: FastAPI) -> None:
    settings = app.state.settings
    app.add_middleware(_SealOnFirstRequest, fastapi_app=app)
    app.add_middleware(BodyLimitMiddleware, limit=settings.max_upload_bytes + MULTIPART_ALLOWANCE)
    app.add_middleware(SecurityHeadersMiddleware)

    @app.exception_handler(NotAuthenticated)
    async def _not_signed_in(request: Request, exc: NotAuthenticated) -> Response:
        if not request.url.path.startswith("/api/") and request.method in ("GET", "HEAD"):
            target = request.url.path + (f"?{request.url.query}" if request.url.query else "")
            return RedirectResponse(f"/login?next={quote(target, safe='')}", status_code=303)
        retry = getattr(exc, "retry_after", 0)
        response = problem_response(request, status=401, code=exc.code, title=exc.title, detail=exc.message)
        if retry:
            response.headers["Retry-After"] = str(retry)
        return response

    @app.exception_handler(PasswordChangeRequired)
    async def _password_first(request: Request, exc: PasswordChangeRequired) -> Response:
        if not request.url.path.startswith("/api/") and request.method in ("GET", "HEAD"):
            return RedirectResponse("/account/password", status_code=303)
        return problem_response(request, status=403, code=exc.code, title=exc.title, detail=exc.message)

    from service.web.account_pages import router as account_router
    from service.web.auth import csrf_for

    app.state.templates.env.globals["csrf_for"] = csrf_for

    app.include_router(account_router)
