"""Server-side sessions: sign in, look up (with idle and absolute timeouts), sign out.

The browser holds only a random session id; the database holds its SHA-256, the person, the
times, and how it ended. A new id is made at every sign-in (no fixation). Sign-in and sign-out
are audit events; so is a session found timed out (21 CFR 11.10(d), Annex 11 §12).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

from sqlalchemy.engine import Engine

from service.release.actor import Actor
from service.security.session_rules import SessionRules, end_reason
from service.security.throttle import ThrottlePolicy
from service.security.tokens import digest, new_session_id
from service.services.security_credentials import Attempt, actor_of, check_credentials, utc_now
from service.store import security as repo
from service.store.audit import append_event
from service.store.unit_of_work import UnitOfWork

TOUCH_EVERY = timedelta(seconds=30)  # last-seen is written at most this often per session


@dataclass(frozen=True, kw_only=True)
class SignedIn:
    """A live session: the person, the session's row id and raw id (the cookie value)."""

    actor: Actor
    session_row_id: int
    token: str
    must_change_password: bool
    signed_once: bool
    created_at: datetime
    last_seen_at: datetime


def sign_in(engine: Engine, *, username: str, password: str, address: str, user_agent: str = "",
            now: datetime | None = None, policy: ThrottlePolicy = ThrottlePolicy()) -> SignedIn:
    """Check the id and password and open a new session; raises `CredentialsRefused`."""
    now = now or utc_now()
    token = new_session_id()
    made: dict[str, int] = {}

    def _open(uow: UnitOfWork, user: repo.UserRow) -> None:
        made["id"] = repo.insert_session(uow.session, token_hash=digest(token), user_id=user.id, now=now,
                                         address=address, user_agent=user_agent)
        append_event(uow.session, actor=actor_of(user), action="user.signed-in", record_type="user",
                     record_id=user.id, new={"address": address[:64], "session": made["id"]}, at=now)

    user = check_credentials(
        engine, Attempt(kind="sign-in", username=username, password=password, address=address, now=now),
        policy=policy, within=_open)
    return SignedIn(actor=actor_of(user), session_row_id=made["id"], token=token,
                    must_change_password=user.must_change_password, signed_once=False,
                    created_at=now, last_seen_at=now)


def _end(engine: Engine, *, row: repo.SessionRow, user: repo.UserRow, reason: str, now: datetime) -> None:
    with UnitOfWork(engine) as uow:
        if repo.end_session(uow.session, row.id, now=now, reason=reason):
            append_event(uow.session, actor=actor_of(user), action="user.signed-out", record_type="user",
                         record_id=user.id, new={"session": row.id, "how": reason}, at=now)
        uow.commit()


def current_session(engine: Engine, token: str | None, *, rules: SessionRules,
                    now: datetime | None = None) -> SignedIn | None:
    """The live session for a cookie value, or None. A session found idle or expired is ended
    (and audited) here; one that is alive has its last-seen time moved on."""
    if not token or len(token) > 200:
        return None
    now = now or utc_now()
    with UnitOfWork(engine, write=False) as uow:
        found = repo.session_and_user(uow.session, digest(token))
    if found is None:
        return None
    row, user = found
    why = end_reason(created_at=row.created_at, last_seen_at=row.last_seen_at, ended_at=row.ended_at,
                     now=now, rules=rules)
    if why is None and not user.active:
        why = "disabled"
    if why is None and user.locked_until and now < user.locked_until:
        why = "locked"
    if why is not None:
        if row.ended_at is None:
            _end(engine, row=row, user=user, reason=why, now=now)
        return None
    if now - row.last_seen_at >= TOUCH_EVERY:
        with UnitOfWork(engine, write=False) as uow:
            repo.touch_session(uow.session, row.id, now)
            uow.commit()
    return SignedIn(actor=actor_of(user), session_row_id=row.id, token=token,
                    must_change_password=user.must_change_password, signed_once=row.signed_once,
                    created_at=row.created_at, last_seen_at=now)


def sign_out(engine: Engine, token: str | None, *, now: datetime | None = None) -> bool:
    """End the session on the server. True if a live session was ended."""
    if not token:
        return False
    now = now or utc_now()
    with UnitOfWork(engine, write=False) as uow:
        row = repo.session_by_token_hash(uow.session, digest(token))
        user = repo.user_by_id(uow.session, row.user_id) if row else None
    if row is None or user is None or row.ended_at is not None:
        return False
    _end(engine, row=row, user=user, reason="signed-out", now=now)
    return True
