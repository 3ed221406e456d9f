"""Use cases the API layer needs around its own requests: idempotency keys and acting users.

`web` reaches the database only through `service.services`; these are thin seams over
`service.store.idempotency` plus the one rule about who an API client acts as.
"""

from __future__ import annotations

from sqlalchemy.engine import Engine

from service.errors import Conflict, NotFound
from service.release.actor import Actor
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


__all__ = [
    "AnswerLost", "ClaimResult", "Claimed", "InFlight", "Mismatch", "Replay", "bind_on_commit", "claim",
    "client_actor", "client_username", "complete", "release", "watch",
]
