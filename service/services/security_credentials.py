"""Checking a user id and password, for sign-in and for signatures, with throttling and lock-out.

The slow argon2 check runs outside any transaction so it never holds the write lock; the outcome
is then written in one unit of work: the attempt row, the failure count, the lock, and the audit
events (every failed check, every lock: 21 CFR 11.300(d), Annex 11 §12).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone

from sqlalchemy.engine import Engine

from service.errors import NotAuthenticated
from service.release.actor import Actor
from service.security.passwords import hash_password, needs_rehash, verify_password
from service.security.throttle import ThrottlePolicy, account_verdict, address_verdict, lock_until, should_lock
from service.store import security as repo
from service.store.audit import SYSTEM_ACTOR, append_event
from service.store.unit_of_work import UnitOfWork

GENERIC_REFUSAL = "the user id or password is not right"


class CredentialsRefused(NotAuthenticated):
    """Wrong user id or password, or too many attempts; ``retry_after`` seconds when throttled."""

    code = "credentials-refused"
    title = "Not signed in"

    def __init__(self, message: str, *, retry_after: int = 0, locked: bool = False) -> None:
        super().__init__(message)
        self.retry_after = retry_after
        self.locked = locked


@dataclass(frozen=True, kw_only=True)
class Attempt:
    kind: str  # "sign-in" | "signature"
    username: str
    password: str
    address: str
    now: datetime


def utc_now() -> datetime:
    return datetime.now(timezone.utc)


def actor_of(user: repo.UserRow) -> Actor:
    return Actor(user_id=user.id, username=user.username, printed_name=user.printed_name,
                 roles=frozenset(user.roles))


def _record_refusal(engine: Engine, a: Attempt, user_id: int | None, outcome: str) -> None:
    with UnitOfWork(engine, write=False) as uow:
        repo.insert_attempt(uow.session, kind=a.kind, username_entered=a.username, user_id=user_id,
                            address=a.address, outcome=outcome, now=a.now)
        uow.commit()


def check_credentials(engine: Engine, a: Attempt, *, policy: ThrottlePolicy = ThrottlePolicy(),
                      within: Callable[[UnitOfWork, repo.UserRow], None] | None = None) -> repo.UserRow:
    """Return the user when the id and password are right and the account may act; otherwise
    record the failure and raise `CredentialsRefused`.

    ``within`` (optional) runs inside the success transaction, e.g. to create the session, so that
    the success and its consequence commit together.
    """
    with UnitOfWork(engine, write=False) as uow:
        user = repo.user_by_username(uow.session, a.username) if a.username.strip() else None
        count, oldest = repo.address_failures_since(
            uow.session, a.address, a.now - timedelta(minutes=policy.address_window_minutes))
    by_address = address_verdict(recent_failures=count, oldest_counted_at=oldest, now=a.now, policy=policy)
    if not by_address.allowed:
        _record_refusal(engine, a, user.id if user else None, "throttled")
        raise CredentialsRefused(by_address.reason, retry_after=by_address.retry_after)
    if user is not None:
        by_account = account_verdict(failures=user.failed_attempts, last_failure_at=user.last_failed_at,
                                     locked_until=user.locked_until, now=a.now, policy=policy)
        if not by_account.allowed:
            locked = bool(user.locked_until and a.now < user.locked_until)
            _record_refusal(engine, a, user.id, "locked" if locked else "throttled")
            raise CredentialsRefused(by_account.reason, retry_after=by_account.retry_after, locked=locked)

    ok = verify_password(user.password_hash if user else None, a.password)

    if user is None:
        with UnitOfWork(engine) as uow:
            repo.insert_attempt(uow.session, kind=a.kind, username_entered=a.username, user_id=None,
                                address=a.address, outcome="unknown-user", now=a.now)
            append_event(uow.session, actor=SYSTEM_ACTOR, action=f"user.{a.kind}-failed", record_type="user",
                         record_id="unknown", new={"username_entered": a.username[:64], "address": a.address,
                                                   "outcome": "unknown-user"}, at=a.now)
            uow.commit()
        raise CredentialsRefused(GENERIC_REFUSAL)

    if ok and not user.active:
        _record_refusal(engine, a, user.id, "disabled")
        raise CredentialsRefused("this account is disabled; ask an administrator")

    with UnitOfWork(engine) as uow:
        fresh = repo.user_by_id(uow.session, user.id)
        assert fresh is not None
        if not ok:
            failures = fresh.failed_attempts + 1
            lock = should_lock(failures, policy)
            values: dict[str, object] = {"failed_attempts": failures, "last_failed_at": a.now}
            if lock:
                values["locked_until"] = lock_until(a.now, policy)
            repo.update_user(uow.session, user.id, **values)
            repo.insert_attempt(uow.session, kind=a.kind, username_entered=a.username, user_id=user.id,
                                address=a.address, outcome="wrong-password", now=a.now)
            append_event(uow.session, actor=actor_of(fresh), action=f"user.{a.kind}-failed", record_type="user",
                         record_id=user.id, new={"address": a.address, "consecutive_failures": failures,
                                                 "outcome": "wrong-password"}, at=a.now)
            if lock:
                ended = repo.end_user_sessions(uow.session, user.id, now=a.now, reason="locked")
                append_event(uow.session, actor=SYSTEM_ACTOR, action="user.locked", record_type="user",
                             record_id=user.id, old={"locked_until": None},
                             new={"locked_until": values["locked_until"].isoformat(),  # type: ignore[attr-defined]
                                  "consecutive_failures": failures, "sessions_ended": ended},
                             reason=f"{failures} wrong passwords in a row", at=a.now)
            uow.commit()
            if lock:
                raise CredentialsRefused(
                    f"the account is now locked after {failures} wrong passwords; ask an administrator to "
                    "unlock it", locked=True)
            raise CredentialsRefused(GENERIC_REFUSAL)
        values = {"failed_attempts": 0, "last_failed_at": None, "locked_until": None}
        if fresh.password_hash and needs_rehash(fresh.password_hash):
            values["password_hash"] = hash_password(a.password)
        repo.update_user(uow.session, user.id, **values)
        repo.insert_attempt(uow.session, kind=a.kind, username_entered=a.username, user_id=user.id,
                            address=a.address, outcome="ok", now=a.now)
        if within is not None:
            within(uow, fresh)
        uow.commit()
    return fresh

