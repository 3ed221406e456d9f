"""Outbound notices to API clients: targets, the outbox, and the delivery log (all their SQL)."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from service.store.api_tables import notice_attempts, notice_targets, notices
from service.store.tables import Lot, Material


@dataclass(frozen=True, kw_only=True)
class Target:
    client_id: str
    url: str
    secret: str
    active: bool
    created_at: datetime


@dataclass(frozen=True, kw_only=True)
class DueNotice:
    id: int
    client_id: str
    lot_code: str
    event: str
    body: str
    attempts: int


def set_target(conn: Connection, *, client_id: str, url: str, secret: str, now: datetime) -> None:
    existing = conn.execute(sa.select(notice_targets.c.client_id).where(notice_targets.c.client_id == client_id)).first()
    values = {"url": url, "secret": secret, "active": True, "created_at": now}
    if existing:
        conn.execute(sa.update(notice_targets).where(notice_targets.c.client_id == client_id).values(**values))
    else:
        conn.execute(sa.insert(notice_targets).values(client_id=client_id, **values))


def disable_target(conn: Connection, *, client_id: str) -> bool:
    res = conn.execute(sa.update(notice_targets).where(notice_targets.c.client_id == client_id).values(active=False))
    return bool(res.rowcount)


def active_targets(conn: Connection) -> list[Target]:
    rows = conn.execute(sa.select(notice_targets).where(notice_targets.c.active.is_(True))).mappings().all()
    return [Target(**dict(r)) for r in rows]


def target_for(conn: Connection, client_id: str) -> Target | None:
    row = conn.execute(sa.select(notice_targets).where(notice_targets.c.client_id == client_id)).mappings().first()
    return Target(**dict(row)) if row else None


def lots_in_states_since(conn: Connection, *, states: tuple[str, ...], since: datetime) -> list[dict[str, Any]]:
    """Lots now in one of ``states`` whose state changed at or after ``since``."""
    lot, mat = Lot.__table__, Material.__table__  # type: ignore[attr-defined]
    rows = conn.execute(
        sa.select(lot.c.code, lot.c.state, lot.c.state_changed_at, mat.c.code.label("material"))
        .join(mat, mat.c.id == lot.c.material_id)
        .where(lot.c.state.in_(states), lot.c.state_changed_at >= since)
        .order_by(lot.c.state_changed_at)
    ).mappings().all()
    return [dict(r) for r in rows]


def enqueue(conn: Connection, *, client_id: str, lot_code: str, event: str, body: str, now: datetime) -> bool:
    """Add a notice unless this client already has one for this lot and event."""
    exists = conn.execute(
        sa.select(notices.c.id).where(
            notices.c.client_id == client_id, notices.c.lot_code == lot_code, notices.c.event == event)
    ).first()
    if exists:
        return False
    conn.execute(sa.insert(notices).values(
        client_id=client_id, lot_code=lot_code, event=event, body=body, created_at=now, attempts=0,
        next_attempt_at=now,
    ))
    return True


def due(conn: Connection, *, now: datetime, limit: int = 20) -> list[DueNotice]:
    rows = conn.execute(
        sa.select(notices.c.id, notices.c.client_id, notices.c.lot_code, notices.c.event, notices.c.body,
                  notices.c.attempts)
        .where(notices.c.delivered_at.is_(None), notices.c.gave_up_at.is_(None), notices.c.next_attempt_at <= now)
        .order_by(notices.c.id).limit(limit)
    ).mappings().all()
    return [DueNotice(**dict(r)) for r in rows]


def lease(conn: Connection, *, notice_id: int, attempts: int, until: datetime) -> bool:
    """Take a due notice for one delivery attempt (so two dispatchers never send it at once)."""
    res = conn.execute(
        sa.update(notices)
        .where(notices.c.id == notice_id, notices.c.attempts == attempts, notices.c.delivered_at.is_(None))
        .values(attempts=attempts + 1, next_attempt_at=until)
    )
    return res.rowcount == 1


def record_attempt(
    conn: Connection, *, notice_id: int, at: datetime, status_code: int | None, error: str | None,
    duration_ms: float, delivered: bool, next_attempt_at: datetime | None,
) -> None:
    conn.execute(sa.insert(notice_attempts).values(
        notice_id=notice_id, attempted_at=at, status_code=status_code, error=error, duration_ms=duration_ms,
    ))
    values: dict[str, Any] = {"next_attempt_at": next_attempt_at}
    if delivered:
        values["delivered_at"] = at
    elif next_attempt_at is None:
        values["gave_up_at"] = at
    conn.execute(sa.update(notices).where(notices.c.id == notice_id).values(**values))


def delivery_log(conn: Connection, *, client_id: str | None = None, limit: int = 100) -> list[dict[str, Any]]:
    q = (
        sa.select(notices.c.id, notices.c.client_id, notices.c.lot_code, notices.c.event, notices.c.created_at,
                  notices.c.attempts, notices.c.delivered_at, notices.c.gave_up_at,
                  notice_attempts.c.attempted_at, notice_attempts.c.status_code, notice_attempts.c.error,
                  notice_attempts.c.duration_ms)
        .select_from(notices.outerjoin(notice_attempts, notice_attempts.c.notice_id == notices.c.id))
        .order_by(notices.c.id.desc(), notice_attempts.c.id.desc()).limit(limit)
    )
    if client_id is not None:
        q = q.where(notices.c.client_id == client_id)
    return [dict(r) for r in conn.execute(q).mappings().all()]
