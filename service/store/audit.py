"""The audit chain: hash-chained events appended in the same transaction as the change they record.

Each event stores the previous event's hash and its own hash over a canonical JSON of its fields
(``service.release.digests.event_hash``). ``seq`` runs 1, 2, 3, ... without gaps, and both
``prev_hash`` and ``hash`` are unique, so the database itself refuses a fork. Appends happen only
inside a writing UnitOfWork, which holds the write lock.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any

from sqlalchemy import insert
from sqlalchemy.engine import Connection
from sqlmodel import Session, col, select

from service.release.actor import Actor
from service.release.digests import GENESIS_HASH, canonical_json, event_hash
from service.store.prepared import Prepared
from service.store.tables import AuditEvent, utc_now

SYSTEM_ACTOR = Actor(user_id=0, username="system", printed_name="Bandgate (system)")


def _fields(*, seq: int, occurred_at: datetime, user_id: int | None, username: str, action: str,
            record_type: str, record_id: str, old_values: str, new_values: str, reason: str) -> dict[str, Any]:
    if occurred_at.tzinfo is None:  # SQLite gives naive datetimes back; they were written in UTC
        occurred_at = occurred_at.replace(tzinfo=timezone.utc)
    return {
        "seq": seq,
        "occurred_at": occurred_at.astimezone(timezone.utc).isoformat(timespec="microseconds"),
        "user_id": user_id,
        "username": username,
        "action": action,
        "record_type": record_type,
        "record_id": record_id,
        "old_values": old_values,
        "new_values": new_values,
        "reason": reason,
    }


def event_fields(ev: AuditEvent) -> dict[str, Any]:
    """The fields an event's hash covers, as they are stored."""
    return _fields(seq=ev.seq, occurred_at=ev.occurred_at, user_id=ev.user_id, username=ev.username,
                   action=ev.action, record_type=ev.record_type, record_id=ev.record_id,
                   old_values=ev.old_values, new_values=ev.new_values, reason=ev.reason)


# Built once and run as prepared statements (`service.store.prepared`): the head of the chain and
# the insert are on every write path.
_TABLE = AuditEvent.__table__
_HEAD = Prepared(select(_TABLE.c.seq, _TABLE.c.hash).order_by(_TABLE.c.seq.desc()).limit(1))
_INSERT = Prepared(insert(_TABLE))
HEAD_KEY = "bandgate_audit_head"  # Connection.info: (seq, hash) of the last event this transaction appended


def append_event(
    target: Session | Connection,
    *,
    actor: Actor,
    action: str,
    record_type: str,
    record_id: int | str,
    old: dict[str, Any] | None = None,
    new: dict[str, Any] | None = None,
    reason: str = "",
    at: datetime | None = None,
) -> None:
    """Append one event to the chain. Call only inside a writing UnitOfWork (it holds the lock).

    ``target`` is the unit of work's session or its connection (the same transaction either way).
    The event is a plain INSERT: no ORM row object, no flush, for a row that is never updated.
    The head of the chain is read once per transaction and then carried on the connection; the
    unit of work forgets it when the transaction ends.
    """
    conn = target.connection() if isinstance(target, Session) else target
    head = conn.info.get(HEAD_KEY)
    if head is None:
        row = _HEAD.first(conn)
        head = (int(row[0]), str(row[1])) if row else (0, GENESIS_HASH)
    values: dict[str, Any] = {
        "seq": head[0] + 1,
        "occurred_at": (at or utc_now()).astimezone(timezone.utc),
        "user_id": actor.user_id or None,
        "username": actor.username,
        "action": action,
        "record_type": record_type,
        "record_id": str(record_id),
        "old_values": canonical_json(old or {}),
        "new_values": canonical_json(new or {}),
        "reason": reason,
    }
    values["prev_hash"] = head[1]
    values["hash"] = event_hash(prev_hash=head[1], fields=_fields(**{k: values[k] for k in _HASHED}))
    _INSERT.run(conn, values)
    conn.info[HEAD_KEY] = (values["seq"], values["hash"])


_HASHED = ("seq", "occurred_at", "user_id", "username", "action", "record_type", "record_id", "old_values",
           "new_values", "reason")


@dataclass(frozen=True, kw_only=True)
class ChainProblem:
    seq: int
    event_id: int | None
    message: str

    def __str__(self) -> str:
        return f"audit event #{self.seq} (id {self.event_id}): {self.message}"


def iter_events(session: Session, *, batch: int = 1000) -> Iterator[AuditEvent]:
    last = 0
    while True:
        rows = session.exec(
            select(AuditEvent).where(col(AuditEvent.seq) > last).order_by(col(AuditEvent.seq)).limit(batch)
        ).all()
        if not rows:
            return
        yield from rows
        last = rows[-1].seq


def check_chain(session: Session) -> tuple[int, list[ChainProblem]]:
    """Recompute every link in order; return (events checked, problems in chain order)."""
    problems: list[ChainProblem] = []
    prev_hash = GENESIS_HASH
    expected_seq = 1
    count = 0
    for ev in iter_events(session):
        count += 1
        if ev.seq != expected_seq:
            problems.append(ChainProblem(seq=ev.seq, event_id=ev.id,
                                         message=f"sequence jumps from {expected_seq - 1} to {ev.seq}: events are missing"))
        if ev.prev_hash != prev_hash:
            problems.append(ChainProblem(seq=ev.seq, event_id=ev.id,
                                         message="previous-hash link does not match the event before it"))
        recomputed = event_hash(prev_hash=ev.prev_hash, fields=event_fields(ev))
        if recomputed != ev.hash:
            problems.append(ChainProblem(seq=ev.seq, event_id=ev.id,
                                         message=f"content changed after it was written ({ev.action} on "
                                                 f"{ev.record_type} {ev.record_id}): stored hash does not match"))
        prev_hash = ev.hash
        expected_seq = ev.seq + 1
    return count, problems


def events_for(session: Session, *, record_type: str | None = None, record_id: str | None = None,
               username: str | None = None, limit: int = 100, offset: int = 0) -> list[AuditEvent]:
    q = select(AuditEvent)
    if record_type:
        q = q.where(AuditEvent.record_type == record_type)
    if record_id is not None:
        q = q.where(AuditEvent.record_id == str(record_id))
    if username:
        q = q.where(AuditEvent.username == username)
    return list(session.exec(q.order_by(col(AuditEvent.seq)).offset(offset).limit(limit)).all())


def events_for_records(session: Session, records: dict[str, list[int]]) -> list[AuditEvent]:
    """Every event about any of the given records ({record_type: [ids]}), in chain order."""
    from sqlalchemy import and_, or_

    clauses = [and_(col(AuditEvent.record_type) == rt, col(AuditEvent.record_id).in_([str(i) for i in ids]))
               for rt, ids in records.items() if ids]
    if not clauses:
        return []
    return list(session.exec(select(AuditEvent).where(or_(*clauses)).order_by(col(AuditEvent.seq))).all())


def count_events(session: Session) -> int:
    from sqlalchemy import func

    return int(session.exec(select(func.count()).select_from(AuditEvent)).one())


def audited_lot_states(session: Session) -> dict[str, str]:
    """The state each lot should be in according to its audit events (record id -> last audited state)."""
    out: dict[str, str] = {}
    q = select(AuditEvent.record_id, AuditEvent.new_values).where(AuditEvent.record_type == "lot") \
        .order_by(col(AuditEvent.seq))
    for record_id, new_values in session.exec(q).all():
        state = json.loads(new_values).get("state")
        if state:
            out[record_id] = state
    return out
