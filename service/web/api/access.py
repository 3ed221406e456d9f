"""Who is calling, may they, and what did they send: checked in that order, before the body is read.

Every API route declares its action with the security layer's ``require_action(Action.X)``
(`service.web.auth`), like every page. FastAPI, however, reads and parses a request body before it
resolves any dependency, so a request without a token but with a malformed body would be told
"invalid body" rather than "authenticate first", and an oversized multipart form would be parsed
for nobody. `ApiRoute` closes that gap: its handler runs the route's declared guard first, then
checks the declared content type, and only then lets FastAPI read and validate the body. (The
guard runs again as an ordinary dependency; the client lookup is cached on the request.)
"""

from __future__ import annotations

from collections.abc import Callable, Coroutine
from email.message import Message
from typing import Any

from fastapi import Request, Response
from fastapi.params import Form
from fastapi.routing import APIRoute

from service import errors as e
from service.release.actor import Actor
from service.release.permissions import Action, Scope, client_may
from service.web.auth import SESSION_COOKIE, Principal, declared_actions

BEARER_SCHEME = {
    "type": "http", "scheme": "bearer",
    "description": "A client token from `bandgate token create --client NAME --scope read,submit`. Scopes: "
    "read, submit (lots and measurements), manage (materials, specifications, references, instruments). "
    "No scope can sign: signatures are given by a person in the web pages.",
}


def scopes_granting(action: Action) -> list[str]:
    """The token scopes that allow ``action`` (for the OpenAPI text)."""
    return [scope.value for scope in Scope if client_may([scope], action)]


def caller_key(principal: Principal) -> str:
    """Scope of idempotency keys: one API client, or one person."""
    if principal.client is not None:
        return f"client:{principal.client.client_id}"
    if principal.person is not None:
        return f"person:{principal.person.actor.user_id}"
    raise e.NotAuthenticated("authenticate first")


def acting_user(request: Request, principal: Principal) -> Actor:
    """The person a write is recorded under: the signed-in person, or the client's own service user."""
    if principal.person is not None:
        return principal.person.actor
    if principal.client is None:
        raise e.NotAuthenticated("authenticate first")
    from service.services.api_requests import client_actor

    return client_actor(request.app.state.engine, client_name=principal.client.name)


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


def _guards(dependant: Any) -> list[Callable[[Request], Any]]:
    found = []
    stack = [dependant]
    while stack:
        d = stack.pop()
        call = getattr(d, "call", None)
        if getattr(call, "bandgate_action", None) is not None:
            found.append(call)
        stack.extend(getattr(d, "dependencies", []) or [])
    return found


class ApiRoute(APIRoute):
    """A route that authenticates, authorises and checks the content type before the body is read."""

    def __init__(self, path: str, endpoint: Callable[..., Any], **kwargs: Any) -> None:
        super().__init__(path, endpoint, **kwargs)
        actions = declared_actions(self.dependant)
        if actions and Action.public not in actions:
            scopes = sorted({s for a in actions for s in scopes_granting(a)})
            note = (f"\n\nNeeds a bearer token with the scope **{' or '.join(scopes)}**."
                    if scopes else "\n\nNo token may do this: it is a person's step.")
            self.description = (self.description or "") + note
            self.openapi_extra = {**(self.openapi_extra or {}), "security": [{"bearer": []}]}

    def get_route_handler(self) -> Callable[[Request], Coroutine[Any, Any, Response]]:
        inner = super().get_route_handler()
        guards = _guards(self.dependant)
        accepted: tuple[str, ...] = ()
        if self.body_field is not None:
            accepted = ("multipart/form-data",) if isinstance(self.body_field.field_info, Form) else (
                "application/json",
            )

        async def handler(request: Request) -> Response:
            if guards and "authorization" not in request.headers and SESSION_COOKIE not in request.cookies:
                raise e.NotAuthenticated(
                    "no credentials: send `Authorization: Bearer <token>` with a token from "
                    "`bandgate token create --client NAME --scope ...`"
                )
            for guard in guards:
                await guard(request)
            if accepted:
                check_content_type(request, accepted)
            return await inner(request)

        return handler
