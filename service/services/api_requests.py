"""Use cases the API layer needs around its own requests: idempotency keys and acting users.

`web` reaches the database only through `service.services`; these are thin seams over
`service.store.idempotency` plus the one rule about who an API client acts as.
"""

from __future__ import annotations

from sqlalchemy.engine import Engine

from service.errors import Conflict, FieldProblem, InvalidInput, NotFound
from service.release.actor import Actor
from service.release.permissions import Action, person_may
from service.store.audit import SYSTEM_ACTOR
from service.store.idempotency import (
    AnswerLost,
    ClaimResult,
    Claimed,
    InFlight,
    Mismatch,
    Replay,
    bind_on_commit,
    claim,
    complete,
    release,
    watch,
)

CLIENT_USER_PREFIX = "api."


def client_username(client_name: str) -> str:
    return CLIENT_USER_PREFIX + client_name.lower()


def client_actor(engine: Engine, *, client_name: str) -> Actor:
    """The user an API client acts as where no person is named (lots, catalogue entries).

    One per client, created on first use (audited), with no roles and no password: it can
    never sign in or sign. Its printed name says which client it is.
    """
    from service.services import create_user, get_actor

    username = client_username(client_name)
    try:
        return get_actor(engine, username)
    except NotFound:
        pass
    try:
        create_user(engine, SYSTEM_ACTOR, username=username, printed_name=f"API client {client_name}", roles=())
    except Conflict:
        pass  # created by a concurrent request
    return get_actor(engine, username)


def operator_actor(engine: Engine, *, username: str) -> Actor:
    """The person named as operator of a measurement: active, and allowed to record measurements."""
    from service.services import get_actor

    try:
        actor = get_actor(engine, username)
    except NotFound:
        actor = None
    return checked_operator(username, actor)


def checked_operator(username: str, actor: Actor | None) -> Actor:
    """``actor`` (the active user found under ``username``, or None) if they may be named as operator."""
    if actor is None:
        raise InvalidInput(
            f"no active user {username!r} to name as operator; give the username of the person who measured",
            fields=[FieldProblem("operator", "username of an active person")],
        )
    if not person_may(actor.roles, Action.record_measurement):
        raise InvalidInput(
            f"{actor.printed_name} ({actor.username}) has no role that records measurements; "
            "name the technician who measured",
            fields=[FieldProblem("operator", "a person whose role records measurements")],
        )
    return actor


def lot_state(engine: Engine, code: str) -> str | None:
    """The lot's current state, read cheaply (the upload answer reports it)."""
    from service.store import repositories as repo
    from service.store.unit_of_work import UnitOfWork

    with UnitOfWork(engine, write=False) as uow:
        lot = repo.lot_by_code(uow.session, code)
        return lot.state if lot is not None else None


__all__ = [
    "AnswerLost", "ClaimResult", "Claimed", "InFlight", "Mismatch", "Replay", "bind_on_commit", "claim",
    "checked_operator", "client_actor", "client_username", "complete", "lot_state", "operator_actor", "release", "watch",
]
