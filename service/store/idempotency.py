"""Idempotency keys of API writes: claim, complete, release (all SQL for them lives here).

A key is scoped to one client. `claim` runs in its own short transaction so a concurrent retry
sees the key as in flight at once; `complete` is meant to run inside the transaction that writes
the record (the use case's), so the stored response and the record commit or vanish together. A
claim left in flight by a crashed process therefore never hides a committed record, and is taken
over once it is older than `stale_after`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any

import sqlalchemy as sa
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


@dataclass(frozen=True, kw_only=True)
class InFlight:
    since: datetime


@dataclass(frozen=True, kw_only=True)
class Mismatch:
    method: str
    path: str


ClaimResult = Claimed | Replay | InFlight | Mismatch


def _begin_write(conn: Connection) -> None:
    if conn.dialect.name == "sqlite":
        conn.info["sqlite_begin"] = "BEGIN IMMEDIATE"


def claim(
    engine: Engine, *, client_id: str, key: str, method: str, path: str, request_hash: str,
    now: datetime, stale_after: timedelta,
) -> ClaimResult:
    """Claim ``key`` for this request, or say why not (replay, in flight, different payload)."""
    for _ in range(3):
        with engine.connect() as conn:
            _begin_write(conn)
            with conn.begin():
                row = conn.execute(
                    sa.select(t).where(t.c.client_id == client_id, t.c.idem_key == key)
                ).mappings().first()
                if row is None:
                    try:
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
                    return Replay(status_code=row["status_code"], body=json.loads(row["response_json"]))
                since = _aware(row["created_at"], now)
                if now - since < stale_after:
                    return InFlight(since=since)
                # stale: the first attempt died without committing anything; take the key over
                conn.execute(sa.update(t).where(t.c.id == row["id"]).values(created_at=now))
                return Claimed(claim_id=row["id"])
    raise RuntimeError("idempotency key could not be claimed")  # pragma: no cover - three lost races


def complete(conn: Connection, *, claim_id: int, status_code: int, body: Any, now: datetime) -> None:
    """Store the response for the claim; call inside the transaction that writes the record."""
    conn.execute(
        sa.update(t).where(t.c.id == claim_id).values(
            state="done", status_code=status_code, response_json=json.dumps(body, sort_keys=True),
            completed_at=now,
        )
    )


def complete_alone(engine: Engine, *, claim_id: int, status_code: int, body: Any, now: datetime) -> None:
    """`complete` in a transaction of its own (for answers that wrote no record)."""
    with engine.begin() as conn:
        complete(conn, claim_id=claim_id, status_code=status_code, body=body, now=now)


def release(engine: Engine, *, claim_id: int) -> None:
    """Forget an in-flight claim whose request recorded nothing, so a retry runs afresh."""
    with engine.begin() as conn:
        conn.execute(sa.delete(t).where(t.c.id == claim_id, t.c.state == "in_flight"))


def _aware(value: datetime, like: datetime) -> datetime:
    if value.tzinfo is None and like.tzinfo is not None:
        return value.replace(tzinfo=like.tzinfo)
    return value
