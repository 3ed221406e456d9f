"""Install the security layer on the app: headers, body ceiling, route sealing, sign-in redirects.

`install_security(app)` is called once by `create_app`. It

* adds the security-header and body-limit middleware (``security_headers.py``);
* checks (with `route_guard`, an app-wide dependency given to the ``FastAPI`` constructor) that
  the route being served declares an action (see ``auth.py``); one that declares none answers
  403, so a forgotten declaration fails closed;
* sends a person who is not signed in (on a page, with GET) to ``/login?next=...`` and a person
  who must choose a new password to ``/account/password``; the API gets problem responses;
* mounts the sign-in, sign-out, password and people-administration pages.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Any
from urllib.parse import quote

from fastapi import Depends, FastAPI, Request
from fastapi.responses import RedirectResponse, Response
from fastapi.routing import iter_route_contexts
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from service.errors import NotAuthenticated
from service.release.permissions import Action
from service.web.auth import AccessDenied, PasswordChangeRequired, declared_actions
from service.web.errors import problem_response
from service.web.security_headers import BodyLimitMiddleware, SecurityHeadersMiddleware

log = logging.getLogger("bandgate.security")

# Non-FastAPI routes the framework itself adds; open to everyone (the API description).
FRAMEWORK_PUBLIC_PATHS = frozenset({"/api/v1/openapi.json", "/api/v1/docs", "/api/v1/docs/oauth2-redirect",
                                    "/docs", "/docs/oauth2-redirect", "/openapi.json", "/redoc"})
DENIED_HEADER = "X-Access-Denied"  # marks a refusal by the role/scope table (the route never ran)
MULTIPART_ALLOWANCE = 256 * 1024  # headers and form fields around an upload


@dataclass(frozen=True, kw_only=True)
class RouteInfo:
    """One route as served: methods, full path, and the actions its dependencies declare."""

    methods: frozenset[str]
    path: str
    actions: frozenset[Action]
    original: Any


def route_table(app: FastAPI) -> list[RouteInfo]:
    """Every FastAPI route as served (routers flattened, prefixes and router dependencies applied)."""
    out: list[RouteInfo] = []
    for rc in iter_route_contexts(app.routes):
        dependant = getattr(rc, "dependant", None)
        if dependant is None:  # a plain Starlette route or mount (framework pages, static files)
            continue
        out.append(RouteInfo(methods=frozenset(rc.methods or ()), path=str(rc.path),
                             actions=frozenset(declared_actions(dependant)), original=rc.original_route))
    return out


def undeclared_routes(app: FastAPI) -> list[str]:
    """Routes that would be closed at run time: FastAPI routes declaring no action, and plain
    Starlette routes or mounts that are neither framework-public nor static files."""
    missing = [f"{','.join(sorted(r.methods))} {r.path}" for r in route_table(app) if not r.actions]
    for rc in iter_route_contexts(app.routes):
        if getattr(rc, "dependant", None) is not None:
            continue
        route = rc.original_route
        if isinstance(route, Mount) and isinstance(route.app, StaticFiles):
            continue
        if isinstance(route, Route) and route.path in FRAMEWORK_PUBLIC_PATHS:
            continue
        missing.append(f"{getattr(route, 'path', '?')} ({type(route).__name__})")
    return missing


def _actions_of(app: FastAPI, route: Any) -> frozenset[Action]:
    cache: dict[int, frozenset[Action]] | None = getattr(app.state, "route_actions", None)
    if cache is None or id(route) not in cache:
        cache = {}
        for info in route_table(app):
            known = cache.get(id(info.original))
            # The same route included twice with different declarations: keep the stricter reading.
            cache[id(info.original)] = info.actions if known is None or info.actions else frozenset()
        app.state.route_actions = cache
    return cache.get(id(route), frozenset())


async def route_guard(request: Request) -> None:
    """App-wide dependency: refuse any route whose dependencies declare no action (fail closed)."""
    route = request.scope.get("route")
    if route is None or not _actions_of(request.app, route):
        raise AccessDenied("this route declares no permission and is closed; report it to the administrator")


def app_dependencies() -> list[Any]:
    """Dependencies for the `FastAPI(...)` constructor, so that every route added later gets them."""
    return [Depends(route_guard)]


def install_security(app: FastAPI) -> None:
    settings = app.state.settings
    if not any(getattr(d, "dependency", None) is route_guard for d in app.router.dependencies):
        raise RuntimeError("create the app with FastAPI(dependencies=app_dependencies()) so every route is guarded")
    app.add_middleware(BodyLimitMiddleware, limit=settings.max_upload_bytes + MULTIPART_ALLOWANCE)
    app.add_middleware(SecurityHeadersMiddleware)

    @app.exception_handler(NotAuthenticated)
    async def _not_signed_in(request: Request, exc: NotAuthenticated) -> Response:
        if not request.url.path.startswith("/api/") and request.method in ("GET", "HEAD"):
            target = request.url.path + (f"?{request.url.query}" if request.url.query else "")
            redirect = RedirectResponse(f"/login?next={quote(target, safe='')}", status_code=303)
            redirect.headers[DENIED_HEADER] = "signed-out"
            return redirect
        retry = getattr(exc, "retry_after", 0)
        response = problem_response(request, status=401, code=exc.code, title=exc.title, detail=exc.message)
        response.headers[DENIED_HEADER] = "signed-out"
        if retry:
            response.headers["Retry-After"] = str(retry)
        return response

    @app.exception_handler(AccessDenied)
    async def _denied(request: Request, exc: AccessDenied) -> Response:
        response = problem_response(request, status=403, code=exc.code, title=exc.title, detail=exc.message)
        response.headers[DENIED_HEADER] = "role" if not request.headers.get("authorization") else "scope"
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
