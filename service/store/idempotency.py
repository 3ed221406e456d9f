"""Idempotency keys of API writes: claim, bind to the record's transaction, complete, release.

A key is scoped to one client. `claim` runs in its own short transaction so that a concurrent
retry sees the key as in flight at once. The use cases own their transactions (one commit each),
so the key is bound to the record by `bind_on_commit`: a listener on the engine's ``commit``
event that, just before the use case's COMMIT reaches the database, marks the claim ``done`` and
notes the newest audit event -- on the same DBAPI connection, so the key and the record commit or
vanish together. The response body is stored right after (`complete`). A crash in the microseconds
between leaves a key that is done without a stored answer: a retry is then told which record was
written (from the audit event) instead of writing a second one. A claim still ``in_flight`` means
nothing was committed, so it is released on error and taken over once older than ``stale_after``.
"""

from __future__ import annotations

import contextvars
import json
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from typing import Any

import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.engine import Connection, Engine
from sqlalchemy.exc import IntegrityError

from service.store.api_tables import idempotency_keys as t


@dataclass(frozen=True, kw_only=True)
class Claimed:
    claim_id: int


@dataclass(frozen=True, kw_only=True)
class Replay:
    status_code: int
    body: Any
    headers: dict[str, str] = field(default_factory=dict)


@dataclass(frozen=True, kw_only=True)
class AnswerLost:
    """The first request committed its record but its answer was not stored."""

    record_type: str | None
    record_id: str | None


@dataclass(frozen=True, kw_only=True)
class InFlight:
    since: datetime


@dataclass(frozen=True, kw_only=True)
class Mismatch:
    method: str
    path: str


ClaimResult = Claimed | Replay | AnswerLost | InFlight | Mismatch


def claim(
    engine: Engine, *, client_id: str, key: str, method: str, path: str, request_hash: str,
    now: datetime, stale_after: timedelta,
) -> ClaimResult:
    """Claim ``key`` for this request, or say why not (replay, in flight, different payload)."""
    for _ in range(3):
        with engine.connect() as conn:
            if conn.dialect.name == "sqlite":
                conn.info["sqlite_begin"] = "BEGIN IMMEDIATE"
            with conn.begin():
                row = conn.execute(
                    sa.select(t).where(t.c.client_id == client_id, t.c.idem_key == key)
                ).mappings().first()
                if row is None:
                    try:
                        with conn.begin_nested():
                            new_id = conn.execute(
                                sa.insert(t).values(
                                    client_id=client_id, idem_key=key, method=method, path=path,
                                    request_hash=request_hash, state="in_flight", created_at=now,
                                ).returning(t.c.id)
                            ).scalar_one()
                    except IntegrityError:
                        continue  # a concurrent request claimed it first: read it again
                    return Claimed(claim_id=new_id)
                if row["request_hash"] != request_hash:
                    return Mismatch(method=row["method"], path=row["path"])
                if row["state"] == "done":
                    if row["status_code"] is None:
                        return _answer_lost(conn, row["audit_seq"])
                    stored = json.loads(row["response_json"])
                    return Replay(status_code=row["status_code"], body=stored["body"], headers=stored["headers"])
                since = _aware(row["created_at"])
                if now - since < stale_after:
                    return InFlight(since=since)
                # stale: the first attempt died without committing anything; take the key over
                conn.execute(sa.update(t).where(t.c.id == row["id"]).values(created_at=now))
                return Claimed(claim_id=row["id"])
    raise RuntimeError("idempotency key could not be claimed")  # pragma: no cover - three lost races


def _answer_lost(conn: Connection, seq: int | None) -> AnswerLost:
    if seq is None:
        return AnswerLost(record_type=None, record_id=None)
    row = conn.execute(
        sa.text("SELECT record_type, record_id FROM audit_events WHERE seq = :s"), {"s": seq}
    ).first()
    return AnswerLost(record_type=row[0] if row else None, record_id=str(row[1]) if row else None)


def complete(engine: Engine, *, claim_id: int, status_code: int, body: Any, now: datetime,
             headers: dict[str, str] | None = None) -> None:
    """Store the answer (status, body, headers such as Location) for a claim, after the record's commit."""
    stored = json.dumps({"body": body, "headers": headers or {}}, sort_keys=True)
    with engine.begin() as conn:
        conn.execute(
            sa.update(t).where(t.c.id == claim_id).values(
                state="done", status_code=status_code, response_json=stored, completed_at=now,
            )
        )


def release(engine: Engine, *, claim_id: int) -> None:
    """Forget a claim whose request committed nothing, so a retry runs afresh."""
    with engine.begin() as conn:
        conn.execute(sa.delete(t).where(t.c.id == claim_id, t.c.state == "in_flight"))


# --- binding a claim to the use case's own transaction -----------------------------------------

@dataclass
class _Binding:
    claim_id: int
    bound: bool = field(default=False)


_current: contextvars.ContextVar[_Binding | None] = contextvars.ContextVar("bandgate_idempotency", default=None)


class bind_on_commit:
    """``with bind_on_commit(claim_id) as b:`` -- the next COMMIT on a watched engine in this context
    also marks the claim done (``b.bound`` tells whether it happened)."""

    def __init__(self, claim_id: int) -> None:
        self.binding = _Binding(claim_id=claim_id)

    def __enter__(self) -> _Binding:
        self._token = _current.set(self.binding)
        return self.binding

    def __exit__(self, *_exc: object) -> None:
        _current.reset(self._token)


def watch(engine: Engine) -> None:
    """Install the commit listener on ``engine`` (once)."""
    if not event.contains(engine, "commit", _on_commit):
        event.listen(engine, "commit", _on_commit)


def _on_commit(conn: Connection) -> None:
    binding = _current.get()
    if binding is None or binding.bound:
        return
    binding.bound = True
    # The SQLAlchemy Connection is mid-commit; talk to the DBAPI connection directly so the
    # statements join the very transaction that is about to commit.
    dbapi = conn.connection.dbapi_connection
    mark = "?" if conn.dialect.paramstyle == "qmark" else "%s"
    now: Any = datetime.now(UTC)
    if conn.dialect.name == "sqlite":
        now = now.replace(tzinfo=None).strftime("%Y-%m-%d %H:%M:%S.%f")  # SQLAlchemy's SQLite format
    cur = dbapi.cursor()  # type: ignore[union-attr]
    try:
        cur.execute("SELECT max(seq) FROM audit_events")
        seq = cur.fetchone()[0]
        cur.execute(
            f"UPDATE api_idempotency_keys SET state = 'done', audit_seq = {mark}, completed_at = {mark} "
            f"WHERE id = {mark} AND state = 'in_flight'",
            (seq, now, binding.claim_id),
        )
    finally:
        cur.close()


def _aware(value: datetime) -> datetime:
    return value.replace(tzinfo=UTC) if value.tzinfo is None else value
