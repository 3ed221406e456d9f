"""Security tables and every SQL statement about people's credentials, sessions, attempts and API clients.

Migration 0003 creates these tables and adds the credential columns to ``users`` (a table the
records migration owns). Plain SQLAlchemy Core on a metadata of our own, executed on the
session of the caller's unit of work; nothing here commits.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any

from sqlalchemy import (
    Boolean,
    Column,
    DateTime,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    Text,
    and_,
    bindparam,
    func,
    insert,
    or_,
    select,
    update,
)
from sqlalchemy.engine import Connection
from sqlalchemy.orm import Session

from service.store.prepared import Prepared

metadata = MetaData()

# Columns migration 0003 adds to the records layer's ``users`` table.
SECURITY_USER_COLUMNS = frozenset({"password_hash", "password_changed_at", "must_change_password",
                                   "failed_attempts", "last_failed_at", "locked_until", "disabled_at"})


def _ts(name: str, nullable: bool = False) -> Column:  # type: ignore[type-arg]
    return Column(name, DateTime(timezone=True), nullable=nullable)


users = Table(
    "users", metadata,
    Column("id", Integer, primary_key=True),
    Column("username", String(64), nullable=False, unique=True),
    Column("printed_name", String(200), nullable=False),
    Column("roles", Text, nullable=False),
    Column("active", Boolean, nullable=False),
    _ts("created_at"),
    # added by 0003
    Column("password_hash", Text, nullable=True),
    _ts("password_changed_at", nullable=True),
    Column("must_change_password", Boolean, nullable=False, default=False),
    Column("failed_attempts", Integer, nullable=False, default=0),
    _ts("last_failed_at", nullable=True),
    _ts("locked_until", nullable=True),
    _ts("disabled_at", nullable=True),
)

user_sessions = Table(
    "user_sessions", metadata,
    Column("id", Integer, primary_key=True),
    Column("token_hash", String(64), nullable=False, unique=True),
    Column("user_id", Integer, ForeignKey("users.id"), nullable=False, index=True),
    _ts("created_at"),
    _ts("last_seen_at"),
    _ts("ended_at", nullable=True),
    Column("end_reason", String(32), nullable=True),
    Column("address", String(64), nullable=False, default=""),
    Column("user_agent", String(200), nullable=False, default=""),
    Column("signed_once", Boolean, nullable=False, default=False),
)

sign_in_attempts = Table(
    "sign_in_attempts", metadata,
    Column("id", Integer, primary_key=True),
    _ts("occurred_at"),
    Column("kind", String(16), nullable=False),  # sign-in | signature
    Column("username_entered", String(64), nullable=False),
    Column("user_id", Integer, ForeignKey("users.id"), nullable=True, index=True),
    Column("address", String(64), nullable=False),
    Column("outcome", String(24), nullable=False),  # ok | wrong-password | unknown-user | throttled | locked | disabled
    Index("ix_sign_in_attempts_address_time", "address", "occurred_at"),
)

api_clients = Table(
    "api_clients", metadata,
    Column("id", Integer, primary_key=True),
    Column("name", String(64), nullable=False, unique=True),
    Column("active", Boolean, nullable=False, default=True),
    _ts("created_at"),
    Column("created_by", Integer, ForeignKey("users.id"), nullable=True),
)

api_tokens = Table(
    "api_tokens", metadata,
    Column("id", Integer, primary_key=True),
    Column("client_id", Integer, ForeignKey("api_clients.id"), nullable=False, index=True),
    Column("token_prefix", String(16), nullable=False),
    Column("token_hash", String(64), nullable=False, unique=True),
    Column("scopes", Text, nullable=False),
    _ts("created_at"),
    Column("created_by", Integer, ForeignKey("users.id"), nullable=True),
    _ts("revoked_at", nullable=True),
    _ts("last_used_at", nullable=True),
)


def utc(value: datetime | None) -> datetime | None:
    """Datetimes back from SQLite are naive; they were written in UTC."""
    if value is None:
        return None
    return value.replace(tzinfo=timezone.utc) if value.tzinfo is None else value.astimezone(timezone.utc)


# ---------------------------------------------------------------- users

@dataclass(frozen=True, kw_only=True)
class UserRow:
    id: int
    username: str
    printed_name: str
    roles: tuple[str, ...]
    active: bool
    created_at: datetime
    password_hash: str | None
    password_changed_at: datetime | None
    must_change_password: bool
    failed_attempts: int
    last_failed_at: datetime | None
    locked_until: datetime | None
    disabled_at: datetime | None


def split_roles(text: str) -> tuple[str, ...]:
    return tuple(r.strip() for r in (text or "").split(",") if r.strip())


def join_roles(roles: tuple[str, ...] | list[str] | frozenset[str]) -> str:
    return ",".join(sorted(set(roles)))


def _user(row: Any) -> UserRow:
    m = row._mapping
    return UserRow(
        id=m["id"], username=m["username"], printed_name=m["printed_name"], roles=split_roles(m["roles"]),
        active=bool(m["active"]), created_at=utc(m["created_at"]),  # type: ignore[arg-type]
        password_hash=m["password_hash"], password_changed_at=utc(m["password_changed_at"]),
        must_change_password=bool(m["must_change_password"]), failed_attempts=int(m["failed_attempts"] or 0),
        last_failed_at=utc(m["last_failed_at"]), locked_until=utc(m["locked_until"]),
        disabled_at=utc(m["disabled_at"]),
    )


def user_by_username(s: Session, username: str) -> UserRow | None:
    row = s.execute(select(users).where(func.lower(users.c.username) == username.strip().lower())).first()
    return _user(row) if row else None


def user_by_id(s: Session, user_id: int) -> UserRow | None:
    row = s.execute(select(users).where(users.c.id == user_id)).first()
    return _user(row) if row else None


def list_users(s: Session) -> list[UserRow]:
    return [_user(r) for r in s.execute(select(users).order_by(users.c.id)).all()]


def insert_user(s: Session, *, username: str, printed_name: str, roles: tuple[str, ...], password_hash: str,
                must_change_password: bool, now: datetime) -> int:
    result = s.execute(insert(users).values(
        username=username, printed_name=printed_name, roles=join_roles(roles), active=True, created_at=now,
        password_hash=password_hash, password_changed_at=now, must_change_password=must_change_password,
        failed_attempts=0,
    ))
    return int(result.inserted_primary_key[0])  # type: ignore[index]


def update_user(s: Session, user_id: int, **values: Any) -> None:
    if "roles" in values and not isinstance(values["roles"], str):
        values["roles"] = join_roles(values["roles"])
    s.execute(update(users).where(users.c.id == user_id).values(**values))


def count_users(s: Session) -> int:
    return int(s.execute(select(func.count()).select_from(users)).scalar_one())


# ---------------------------------------------------------------- sessions

@dataclass(frozen=True, kw_only=True)
class SessionRow:
    id: int
    user_id: int
    created_at: datetime
    last_seen_at: datetime
    ended_at: datetime | None
    end_reason: str | None
    signed_once: bool


def _session(row: Any) -> SessionRow:
    m = row._mapping
    return SessionRow(id=m["id"], user_id=m["user_id"], created_at=utc(m["created_at"]),  # type: ignore[arg-type]
                      last_seen_at=utc(m["last_seen_at"]), ended_at=utc(m["ended_at"]),  # type: ignore[arg-type]
                      end_reason=m["end_reason"], signed_once=bool(m["signed_once"]))


def insert_session(s: Session, *, token_hash: str, user_id: int, now: datetime, address: str,
                   user_agent: str) -> int:
    result = s.execute(insert(user_sessions).values(
        token_hash=token_hash, user_id=user_id, created_at=now, last_seen_at=now, address=address[:64],
        user_agent=user_agent[:200], signed_once=False,
    ))
    return int(result.inserted_primary_key[0])  # type: ignore[index]


def session_by_token_hash(s: Session, token_hash: str) -> SessionRow | None:
    row = s.execute(select(user_sessions).where(user_sessions.c.token_hash == token_hash)).first()
    return _session(row) if row else None


def _session_and_user_statement() -> Any:
    sess = user_sessions.alias("s")
    cols = [c.label(f"s_{c.name}") for c in sess.c] + list(users.c)
    return (select(*cols).join_from(sess, users, users.c.id == sess.c.user_id)
            .where(sess.c.token_hash == bindparam("token_hash")))


_SESSION_AND_USER = _session_and_user_statement()  # built once: it runs on every request


def session_and_user(s: Session, token_hash: str) -> tuple[SessionRow, UserRow] | None:
    """The session with this token hash and its person, in one query (run on every request)."""
    row = s.execute(_SESSION_AND_USER, {"token_hash": token_hash}).first()
    if row is None:
        return None
    m = row._mapping
    session_row = SessionRow(id=m["s_id"], user_id=m["s_user_id"], created_at=utc(m["s_created_at"]),  # type: ignore[arg-type]
                             last_seen_at=utc(m["s_last_seen_at"]), ended_at=utc(m["s_ended_at"]),  # type: ignore[arg-type]
                             end_reason=m["s_end_reason"], signed_once=bool(m["s_signed_once"]))
    return session_row, _user(row)


def touch_session(s: Session, session_id: int, now: datetime) -> None:
    s.execute(update(user_sessions).where(and_(user_sessions.c.id == session_id,
                                               user_sessions.c.ended_at.is_(None))).values(last_seen_at=now))


def mark_signed(s: Session, session_id: int) -> None:
    s.execute(update(user_sessions).where(user_sessions.c.id == session_id).values(signed_once=True))


def end_session(s: Session, session_id: int, *, now: datetime, reason: str) -> bool:
    result = s.execute(update(user_sessions).where(and_(user_sessions.c.id == session_id,
                                                        user_sessions.c.ended_at.is_(None)))
                       .values(ended_at=now, end_reason=reason))
    return bool(result.rowcount)  # type: ignore[attr-defined]


def end_user_sessions(s: Session, user_id: int, *, now: datetime, reason: str, except_id: int | None = None) -> int:
    cond = and_(user_sessions.c.user_id == user_id, user_sessions.c.ended_at.is_(None))
    if except_id is not None:
        cond = and_(cond, user_sessions.c.id != except_id)
    result = s.execute(update(user_sessions).where(cond).values(ended_at=now, end_reason=reason))
    return int(result.rowcount)  # type: ignore[attr-defined]


def open_session_count(s: Session, user_id: int) -> int:
    return int(s.execute(select(func.count()).select_from(user_sessions).where(
        and_(user_sessions.c.user_id == user_id, user_sessions.c.ended_at.is_(None)))).scalar_one())


# ---------------------------------------------------------------- attempts

def insert_attempt(s: Session, *, kind: str, username_entered: str, user_id: int | None, address: str,
                   outcome: str, now: datetime) -> None:
    s.execute(insert(sign_in_attempts).values(
        occurred_at=now, kind=kind, username_entered=username_entered[:64], user_id=user_id,
        address=address[:64], outcome=outcome,
    ))


def address_failures_since(s: Session, address: str, since: datetime) -> tuple[int, datetime | None]:
    """Failed attempts from ``address`` since ``since``: (count, time of the oldest counted)."""
    row = s.execute(select(func.count(), func.min(sign_in_attempts.c.occurred_at)).where(and_(
        sign_in_attempts.c.address == address[:64],
        sign_in_attempts.c.occurred_at >= since,
        or_(sign_in_attempts.c.outcome == "wrong-password", sign_in_attempts.c.outcome == "unknown-user"),
    ))).one()
    return int(row[0]), utc(row[1])


def recent_attempts(s: Session, *, limit: int = 50, user_id: int | None = None) -> list[dict[str, Any]]:
    q = select(sign_in_attempts)
    if user_id is not None:
        q = q.where(sign_in_attempts.c.user_id == user_id)
    rows = s.execute(q.order_by(sign_in_attempts.c.id.desc()).limit(limit)).all()
    return [dict(r._mapping, occurred_at=utc(r._mapping["occurred_at"])) for r in rows]


# ---------------------------------------------------------------- API clients

@dataclass(frozen=True, kw_only=True)
class ClientToken:
    client_id: int
    client_name: str
    token_id: int
    scopes: tuple[str, ...]
    last_used_at: datetime | None


def client_by_name(s: Session, name: str) -> dict[str, Any] | None:
    row = s.execute(select(api_clients).where(api_clients.c.name == name)).first()
    return dict(row._mapping) if row else None


def insert_client(s: Session, *, name: str, created_by: int | None, now: datetime) -> int:
    result = s.execute(insert(api_clients).values(name=name, active=True, created_at=now, created_by=created_by))
    return int(result.inserted_primary_key[0])  # type: ignore[index]


def insert_token(s: Session, *, client_id: int, prefix: str, token_hash: str, scopes: tuple[str, ...],
                 created_by: int | None, now: datetime) -> int:
    result = s.execute(insert(api_tokens).values(
        client_id=client_id, token_prefix=prefix, token_hash=token_hash, scopes=",".join(scopes),
        created_at=now, created_by=created_by,
    ))
    return int(result.inserted_primary_key[0])  # type: ignore[index]


_ACTIVE_TOKEN = (  # built once: it runs on every API request
    select(api_tokens.c.id, api_tokens.c.scopes, api_tokens.c.last_used_at, api_clients.c.id.label("cid"),
           api_clients.c.name)
    .join(api_clients, api_clients.c.id == api_tokens.c.client_id)
    .where(and_(api_tokens.c.token_hash == bindparam("token_hash"), api_tokens.c.revoked_at.is_(None),
                api_clients.c.active.is_(True)))
)


_RUN_ACTIVE_TOKEN = Prepared(_ACTIVE_TOKEN)


def active_token(conn: Connection, token_hash: str) -> ClientToken | None:
    """The active token with this hash and its client (every API request asks: a prepared statement
    on a connection is cheapest, `service.store.prepared`)."""
    row = _RUN_ACTIVE_TOKEN.first(conn, {"token_hash": token_hash})
    if not row:
        return None
    token_id, scopes, last_used_at, client_id, client_name = row
    return ClientToken(client_id=client_id, client_name=client_name, token_id=token_id,
                       scopes=split_roles(scopes), last_used_at=utc(last_used_at))


def touch_token(s: Session | Connection, token_id: int, now: datetime) -> None:
    s.execute(update(api_tokens).where(api_tokens.c.id == token_id).values(last_used_at=now))


def revoke_client_tokens(s: Session, client_id: int, now: datetime) -> int:
    result = s.execute(update(api_tokens).where(and_(api_tokens.c.client_id == client_id,
                                                     api_tokens.c.revoked_at.is_(None))).values(revoked_at=now))
    return int(result.rowcount)  # type: ignore[attr-defined]


def list_clients(s: Session) -> list[dict[str, Any]]:
    rows = s.execute(
        select(api_clients.c.id, api_clients.c.name, api_clients.c.active, api_clients.c.created_at,
               api_tokens.c.token_prefix, api_tokens.c.scopes, api_tokens.c.created_at.label("token_created_at"),
               api_tokens.c.revoked_at, api_tokens.c.last_used_at)
        .select_from(api_clients.outerjoin(api_tokens, api_tokens.c.client_id == api_clients.c.id))
        .order_by(api_clients.c.name, api_tokens.c.id)
    ).all()
    return [dict(r._mapping) for r in rows]
