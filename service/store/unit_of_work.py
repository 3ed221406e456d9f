"""Unit of work: one transaction per use case that rolls back unless the use case commits.

A writing unit of work takes the database-wide write lock up front, so that audit events are
appended one at a time and the chain never forks under concurrent writers:

* SQLite: ``BEGIN IMMEDIATE`` (the engine's begin hook reads ``conn.info["sqlite_begin"]``);
* PostgreSQL: a transaction-scoped advisory lock, ``pg_advisory_xact_lock``.

Any state read after the lock is taken is the latest committed state, so a check-then-write in
the same unit of work (e.g. "the lot is still awaiting disposition, so release it") is safe.
"""

from __future__ import annotations

from types import TracebackType

from sqlalchemy import text
from sqlalchemy.engine import Connection, Engine
from sqlmodel import Session

WRITE_LOCK_KEY = 0x42414E44  # a fixed advisory-lock key for Bandgate record writes


class UnitOfWork:
    """``with UnitOfWork(engine) as uow: ...; uow.commit()`` -- anything not committed is rolled back."""

    def __init__(self, engine: Engine, *, write: bool = True) -> None:
        self.engine = engine
        self.write = write
        self._conn: Connection | None = None
        self._committed = False
        self.session: Session

    def __enter__(self) -> "UnitOfWork":
        conn = self.engine.connect()
        try:
            if conn.dialect.name == "sqlite" and self.write:
                conn.info["sqlite_begin"] = "BEGIN IMMEDIATE"
            self._trans = conn.begin()
            if conn.dialect.name == "postgresql" and self.write:
                conn.execute(text("SELECT pg_advisory_xact_lock(:k)"), {"k": WRITE_LOCK_KEY})
        except BaseException:
            conn.info.pop("sqlite_begin", None)
            conn.close()
            raise
        self._conn = conn
        self.session = Session(bind=conn, expire_on_commit=False, autoflush=True)
        return self

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    def flush(self) -> None:
        self.session.flush()

    def commit(self) -> None:
        self.session.flush()
        self._trans.commit()
        self._committed = True

    def rollback(self) -> None:
        if self._trans.is_active:
            self._trans.rollback()

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> None:
        try:
            if not self._committed:
                self.rollback()
        finally:
            self.session.close()
            if self._conn is not None:
                self._conn.close()
