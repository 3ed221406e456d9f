"""FastAPI dependencies for who is asking and what they may do, failing closed.

Every route declares exactly one action from ``service.release.permissions.Action``::

    @router.get("/lots/{code}", dependencies=[require_action(Action.view_records)])
    def lot_page(...): ...

    @router.post("/lots")
    def receive(..., who: Principal = require_action(Action.receive_lot)): ...

`require_action` finds the caller — an API client from ``Authorization: Bearer``, otherwise a
person from the session cookie — and refuses with 401 (nobody) or 403 (not allowed) before the
route body runs. For a person on an unsafe method (POST, PUT, PATCH, DELETE) it also checks the
CSRF token (form field ``csrf_token`` or header ``X-CSRF-Token``) and, when the browser sends
one, the ``Origin``. A route that declares no action is refused at run time (`seal_routes`) and
fails the role × route test. See ``docs/security.md``.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any
from urllib.parse import urlsplit

from fastapi import Depends, Request, Response
from starlette.concurrency import run_in_threadpool

from service.errors import Forbidden, NotAuthenticated
from service.release.actor import Actor
from service.release.permissions import Action, client_may, person_may
from service.security.session_rules import SessionRules
from service.security.tokens import csrf_matches, csrf_token
from service.services.security_clients import ApiClient, client_for_token
from service.services.security_sessions import SignedIn, current_session
from service.web.work_placement import run_database_work

SESSION_COOKIE = "bandgate_session"
CSRF_FIELD = "csrf_token"
CSRF_HEADER = "x-csrf-token"
SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})


class PasswordChangeRequired(Forbidden):
    """The person's password was reset (or set by an administrator): they must choose one first."""

    code = "password-change-required"
    title = "Choose a new password first"


class AccessDenied(Forbidden):
    """The route's action is not granted to the caller's roles or scopes (refused before the route runs)."""

    code = "access-denied"
    title = "Not allowed"


class CsrfRefused(Forbidden):
    code = "csrf-refused"
    title = "Form expired or not from this site"


def now_utc(request: Request) -> datetime:
    """The request's clock (``app.state.clock`` when a test sets one)."""
    clock = getattr(request.app.state, "clock", None)
    return clock() if clock is not None else datetime.now(timezone.utc)


def client_address(request: Request) -> str:
    return request.client.host if request.client else "unknown"


def session_rules(request: Request) -> SessionRules:
    s = request.app.state.settings
    return SessionRules.from_minutes(idle_minutes=s.session_idle_minutes, absolute_hours=s.session_absolute_hours)


def current_person(request: Request) -> SignedIn | None:
    """The signed-in person for this request's session cookie, or None (looked up once per request)."""
    if hasattr(request.state, "bandgate_person"):
        return request.state.bandgate_person  # type: ignore[no-any-return]
    person = current_session(request.app.state.engine, request.cookies.get(SESSION_COOKIE),
                             rules=session_rules(request), now=now_utc(request))
    request.state.bandgate_person = person
    return person


def _bearer(request: Request) -> str | None:
    header = request.headers.get("authorization", "")
    scheme, _, value = header.partition(" ")
    if scheme.lower() != "bearer":
        return None
    return value.strip() or ""


def current_client(request: Request) -> ApiClient | None:
    """The API client of this request's bearer token, or None."""
    if hasattr(request.state, "bandgate_client"):
        return request.state.bandgate_client  # type: ignore[no-any-return]
    client = client_for_token(request.app.state.engine, _bearer(request), now=now_utc(request))
    request.state.bandgate_client = client
    return client


def csrf_for(request: Request) -> str:
    """The CSRF token to put in this person's forms (empty when nobody is signed in)."""
    person = current_person(request)
    if person is None:
        return ""
    return csrf_token(person.token, request.app.state.settings.secret_key)


@dataclass(frozen=True, kw_only=True)
class Principal:
    """Who is asking: a person (``person``) or an API client (``client``), or nobody on a public route."""

    person: SignedIn | None = None
    client: ApiClient | None = None

    @property
    def actor(self) -> Actor:
        """The person as the records layer's Actor; an API client acts as a named system actor."""
        if self.person is not None:
            return self.person.actor
        if self.client is not None:
            return Actor(user_id=0, username=f"client:{self.client.name}"[:64],
                         printed_name=f"API client {self.client.name}", roles=frozenset())
        raise NotAuthenticated("sign in first")


def _origin_ok(request: Request) -> bool:
    origin = request.headers.get("origin")
    if not origin or origin == "null":
        return origin is None
    o = urlsplit(origin)
    return (o.scheme, o.netloc) == (request.url.scheme, request.url.netloc)


async def _check_csrf(request: Request, person: SignedIn) -> None:
    if request.method in SAFE_METHODS:
        return
    if not _origin_ok(request):
        raise CsrfRefused("this request came from another site and was refused; nothing was changed")
    offered = request.headers.get(CSRF_HEADER)
    if not offered:
        ctype = request.headers.get("content-type", "")
        if ctype.startswith(("application/x-www-form-urlencoded", "multipart/form-data")):
            form = await request.form()
            value = form.get(CSRF_FIELD)
            offered = value if isinstance(value, str) else None
    if not csrf_matches(person.token, request.app.state.settings.secret_key, offered):
        raise CsrfRefused("the form had no valid security token (it may have expired); reload the page and "
                          "try again. Nothing was changed")


async def _looked_up(request: Request, key: str, look_up: Any, *, may_run_in_place: bool = False) -> Any:
    """The caller found once per request (the guard runs before the body is read and again as a
    dependency): a database look-up the first time, the kept answer after. The look-up runs in the
    thread pool, or, if ``may_run_in_place``, where `work_placement` puts short database work."""
    if hasattr(request.state, key):
        return getattr(request.state, key)
    if may_run_in_place:
        return await run_database_work(request.app.state.engine, lambda: look_up(request))
    return await run_in_threadpool(look_up, request)


def require_action(action: Action) -> Any:
    """A dependency that admits the caller only if they may do ``action``; returns the `Principal`."""
    action = Action(action)

    async def _guard(request: Request) -> Principal:
        if action is Action.public:
            return Principal()
        bearer = _bearer(request)
        if bearer is not None:
            client = await _looked_up(request, "bandgate_client", current_client, may_run_in_place=True)
            if client is None:
                raise NotAuthenticated("the bearer token is not recognised or was revoked; "
                                       "ask an administrator for a token (`bandgate token create`)")
            if not client_may(client.scopes, action):
                raise AccessDenied(f"this client's token (scopes: {', '.join(sorted(client.scopes))}) does not "
                                f"allow {action.value.replace('_', ' ')}"
                                + ("; signatures are given by people, never by tokens"
                                   if action.value.startswith("sign_") else ""))
            return Principal(client=client)
        person = await _looked_up(request, "bandgate_person", current_person)
        if person is None:
            raise NotAuthenticated("sign in first (your session may have ended after a period without activity)")
        if person.must_change_password and action is not Action.own_account:
            raise PasswordChangeRequired("your password was set by an administrator: choose your own password "
                                         "before doing anything else")
        if not person_may(person.actor.roles, action):
            raise AccessDenied(f"your roles ({', '.join(sorted(person.actor.roles)) or 'none'}) do not allow "
                            f"{action.value.replace('_', ' ')}")
        await _check_csrf(request, person)
        return Principal(person=person)

    _guard.bandgate_action = action  # type: ignore[attr-defined]
    _guard.__name__ = f"require_{action.value}"
    return Depends(_guard)


def public() -> Any:
    """Shorthand for ``require_action(Action.public)``: open to everyone."""
    return require_action(Action.public)


def declared_actions(dependant: Any) -> set[Action]:
    """Every action declared anywhere in a route's dependency tree."""
    found: set[Action] = set()
    stack = [dependant]
    while stack:
        d = stack.pop()
        call = getattr(d, "call", None)
        act = getattr(call, "bandgate_action", None)
        if act is not None:
            found.add(act)
        stack.extend(getattr(d, "dependencies", []) or [])
    return found


def set_session_cookie(request: Request, response: Response, token: str) -> None:
    response.set_cookie(SESSION_COOKIE, token, httponly=True, samesite="lax", path="/",
                        secure=request.url.scheme == "https")


def clear_session_cookie(request: Request, response: Response) -> None:
    response.delete_cookie(SESSION_COOKIE, path="/", httponly=True, samesite="lax",
                           secure=request.url.scheme == "https")

