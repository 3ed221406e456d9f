"""The pages' view of the security layer (``service.web.auth``, ``service.services.security_*``).

Routes declare their permission with ``require_action`` (which also checks the CSRF token on
every POST); this module turns the session into the small `Person` the templates show and runs
the password re-entry of a signature.
"""

from __future__ import annotations

from typing import Any, Callable

from fastapi import Request

from service.release.permissions import ROLE_ACTIONS, Action, parse_roles
from service.web import auth
from service.web.pages._base import Person


def person_for(request: Request) -> Person | None:
    signed = auth.current_person(request)
    if signed is None:
        return None
    actor = signed.actor
    may: set[str] = set()
    for role in parse_roles(actor.roles):
        may |= {a.value for a in ROLE_ACTIONS.get(role, frozenset())}
    return Person(user_id=actor.user_id, username=actor.username, printed_name=actor.printed_name,
                  roles=frozenset(actor.roles), csrf_token=auth.csrf_for(request), may=frozenset(may))


def may(person: Person, action: str) -> bool:
    return action in person.may


def allow(action: str) -> Any:
    """The route dependency that admits only people (or clients) allowed ``action``."""
    return auth.require_action(Action(action))


def signing_needs_username(request: Request) -> bool:
    """21 CFR 11.200(a)(1): the first signature of a session needs user id and password."""
    signed = auth.current_person(request)
    return signed is None or not signed.signed_once


def sign_with_password(request: Request, person: Person, *, action: str, username: str | None, password: str,
                       perform: Callable[[Any], Any]) -> Any:
    from service.services.security_signing import sign_with_password as _sign

    signed = auth.current_person(request)
    if signed is None:
        from service.errors import NotAuthenticated

        raise NotAuthenticated("your session has ended; sign in again, then sign")
    return _sign(request.app.state.engine, signed_in=signed, username=username, password=password,
                 action=Action(action), address=auth.client_address(request), perform=perform)
