"""Who is calling, what they may do, and what they sent: checked in that order, before the body is read.

FastAPI reads and parses a request body before it resolves any dependency, so a missing token on a
request with a malformed body would be answered "invalid body" rather than "authenticate first".
`ApiRoute` closes that gap: its handler authenticates the bearer token, checks the route's scope
and the declared content type, and only then lets FastAPI read and validate the body.

A route declares what it does once, as a dependency ``Depends(Needs(Action.receive_lot))``; the
security layer's scope table (`service.release.permissions`) says which token scopes allow it, and
the same declaration feeds the OpenAPI text.
"""

from __future__ import annotations

from collections.abc import Callable, Coroutine
from dataclasses import dataclass
from email.message import Message
from typing import Annotated, Any

from fastapi import Request, Response, Security
from fastapi.dependencies.models import Dependant
from fastapi.params import Form
from fastapi.routing import APIRoute
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from starlette.concurrency import run_in_threadpool

from service import errors as e
from service.release.permissions import Action, Scope, client_may

bearer_scheme = HTTPBearer(
    auto_error=False,
    scheme_name="bearer",
    description="A client token from `bandgate token create --client NAME --scope read,submit`. "
    "Scopes: read, submit (lots and measurements), manage (materials, specifications, references, "
    "instruments). No scope can sign: signatures are given by a person in the web pages.",
)

@dataclass(frozen=True, kw_only=True)
class Principal:
    """The registered API client a request acts for."""

    client_id: str
    client_name: str
    scopes: frozenset[str]
    token_id: int | None = None


def _bearer_token(request: Request) -> str:
    header = request.headers.get("authorization", "")
    kind, _, token = header.partition(" ")
    if not header:
        raise e.NotAuthenticated(
            "no credentials: send `Authorization: Bearer <token>` with a token from `bandgate token create`"
        )
    if kind.lower() != "bearer" or not token.strip():
        raise e.NotAuthenticated("the Authorization header must be `Bearer <token>`")
    return token.strip()


def authenticate(request: Request) -> Principal:
    """Resolve the bearer token to a principal (cached on the request)."""
    cached = getattr(request.state, "principal", None)
    if cached is not None:
        return cached
    from service.web.api.clients import principal_for_token

    principal = principal_for_token(request.app.state.engine, _bearer_token(request))
    request.state.principal = principal
    return principal


def scopes_granting(action: Action) -> list[str]:
    """The token scopes that allow ``action`` (for the OpenAPI text and error messages)."""
    return [scope.value for scope in Scope if client_may([scope], action)]


def authorize(principal: Principal, action: Action) -> None:
    if not client_may(principal.scopes, action):
        needed = " or ".join(scopes_granting(action)) or "none (no token may do this; it is a person's step)"
        raise e.Forbidden(
            f"this client's token may not {action.value.replace('_', ' ')}: it needs the scope {needed} "
            f"(it has: {', '.join(sorted(principal.scopes)) or 'none'}); ask the administrator for such a token"
        )


class Needs:
    """Dependency: the calling client, allowed to do ``action`` (the route handler checked it first)."""

    def __init__(self, action: Action) -> None:
        self.action = action

    def __call__(
        self,
        request: Request,
        _creds: Annotated[HTTPAuthorizationCredentials | None, Security(bearer_scheme)] = None,
    ) -> Principal:
        principal = authenticate(request)
        authorize(principal, self.action)
        return principal


def _route_action(dependant: Dependant) -> Action | None:
    for dep in dependant.dependencies:
        if isinstance(dep.call, Needs):
            return dep.call.action
        found = _route_action(dep)
        if found is not None:
            return found
    return None


def _media_type(request: Request) -> str:
    raw = request.headers.get("content-type", "")
    msg = Message()
    msg["content-type"] = raw
    return msg.get_content_type() if raw else ""


def check_content_type(request: Request, accepted: tuple[str, ...]) -> None:
    media = _media_type(request)
    ok = any(media == a or (a == "application/json" and media.endswith("+json")) for a in accepted)
    if not ok:
        raise e.UnsupportedMediaType(
            f"this endpoint takes {' or '.join(accepted)}, not {media or 'a body without Content-Type'}; "
            "set the Content-Type header accordingly",
        )


class ApiRoute(APIRoute):
    """A route that authenticates, checks scope and content type before FastAPI reads the body."""

    def get_route_handler(self) -> Callable[[Request], Coroutine[Any, Any, Response]]:
        inner = super().get_route_handler()
        action = _route_action(self.dependant)
        accepted: tuple[str, ...] = ()
        if self.body_field is not None:
            accepted = ("multipart/form-data",) if isinstance(self.body_field.field_info, Form) else (
                "application/json",
            )

        async def handler(request: Request) -> Response:
            if action is not None:
                principal = await run_in_threadpool(authenticate, request)
                authorize(principal, action)
            if accepted:
                check_content_type(request, accepted)
            return await inner(request)

        return handler

    def __init__(self, path: str, endpoint: Callable[..., Any], **kwargs: Any) -> None:
        super().__init__(path, endpoint, **kwargs)
        action = _route_action(self.dependant)
        if action is not None:
            note = f"\n\nNeeds a bearer token with the scope **{' or '.join(scopes_granting(action))}**."
            self.description = (self.description or "") + note
