"""API clients (lab information systems) and their bearer tokens.

A token is shown once, when made; only its SHA-256 is stored. Scopes: read, submit, manage
(``service.release.permissions.SCOPE_ACTIONS``). No scope can sign.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import datetime, timedelta

from sqlalchemy.engine import Engine

from service.errors import FieldProblem, InvalidInput, NotFound
from service.release.actor import Actor
from service.release.permissions import Scope
from service.security.tokens import digest, looks_like_api_token, new_api_token
from service.services.security_credentials import utc_now
from service.store import security as repo
from service.store.audit import SYSTEM_ACTOR, append_event
from service.store.unit_of_work import UnitOfWork

CLIENT_NAME_RE = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")
LAST_USED_EVERY = timedelta(minutes=5)


@dataclass(frozen=True, kw_only=True)
class ApiClient:
    """The client behind a bearer token."""

    client_id: int
    name: str
    scopes: frozenset[str]
    token_id: int


def parse_scopes(text: str | list[str]) -> tuple[str, ...]:
    items = text.split(",") if isinstance(text, str) else text
    names = tuple(sorted({s.strip().lower() for s in items if s.strip()}))
    known = {s.value for s in Scope}
    unknown = [n for n in names if n not in known]
    if not names or unknown:
        msg = (f"unknown scope(s) {', '.join(unknown)}; " if unknown else "give at least one scope; ") + \
            f"choose from {', '.join(sorted(known))} (no scope can sign: signatures are a person's)"
        raise InvalidInput(msg, fields=[FieldProblem("scope", msg)])
    return names


def create_token(engine: Engine, *, client: str, scopes: str | list[str], admin: Actor | None = None,
                 now: datetime | None = None) -> str:
    """Make a token for ``client`` (registering the client if new). Returns the token; it is not stored."""
    now = now or utc_now()
    if not CLIENT_NAME_RE.match(client):
        msg = "a client name is 1 to 64 letters, digits, '.', '_' or '-'"
        raise InvalidInput(msg, fields=[FieldProblem("client", msg)])
    names = parse_scopes(scopes)
    made = new_api_token()
    actor = admin or SYSTEM_ACTOR
    with UnitOfWork(engine) as uow:
        existing = repo.client_by_name(uow.session, client)
        if existing is None:
            cid = repo.insert_client(uow.session, name=client, created_by=admin.user_id if admin else None, now=now)
            append_event(uow.session, actor=actor, action="api_client.registered", record_type="api_client",
                         record_id=cid, new={"name": client}, at=now)
        else:
            cid = int(existing["id"])
        tid = repo.insert_token(uow.session, client_id=cid, prefix=made.prefix, token_hash=made.hash, scopes=names,
                                created_by=admin.user_id if admin else None, now=now)
        append_event(uow.session, actor=actor, action="api_client.token-created", record_type="api_client", record_id=cid,
                     new={"token": tid, "prefix": made.prefix, "scopes": list(names)}, at=now)
        uow.commit()
    return made.token


def revoke_tokens(engine: Engine, *, client: str, reason: str, admin: Actor | None = None,
                  now: datetime | None = None) -> int:
    now = now or utc_now()
    with UnitOfWork(engine) as uow:
        existing = repo.client_by_name(uow.session, client)
        if existing is None:
            raise NotFound(f"there is no API client {client!r}; `bandgate token list` shows them")
        n = repo.revoke_client_tokens(uow.session, int(existing["id"]), now)
        append_event(uow.session, actor=admin or SYSTEM_ACTOR, action="api_client.tokens-revoked",
                     record_type="api_client", record_id=int(existing["id"]), new={"revoked": n},
                     reason=reason, at=now)
        uow.commit()
    return n


def client_for_token(engine: Engine, token: str | None, *, now: datetime | None = None) -> ApiClient | None:
    """The active client whose token this is, or None (unknown, revoked, or client deactivated)."""
    if not token or not looks_like_api_token(token):
        return None
    now = now or utc_now()
    with UnitOfWork(engine, write=False) as uow:
        found = repo.active_token(uow.connection, digest(token))
    if found is None:
        return None
    if found.last_used_at is None or now - found.last_used_at >= LAST_USED_EVERY:
        with UnitOfWork(engine, write=False) as uow:
            repo.touch_token(uow.connection, found.token_id, now)
            uow.commit()
    return ApiClient(client_id=found.client_id, name=found.client_name, scopes=frozenset(found.scopes),
                     token_id=found.token_id)


def list_clients(engine: Engine) -> list[dict[str, object]]:
    with UnitOfWork(engine, write=False) as uow:
        return repo.list_clients(uow.session)
