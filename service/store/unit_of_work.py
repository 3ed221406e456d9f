"""Unit of work: one transaction per use case that rolls back unless the use case commits.

A writing unit of work takes the database-wide write lock up front, so that audit events are
appended one at a time and the chain never forks under concurrent writers:

* SQLite: ``BEGIN IMMEDIATE`` (the engine's begin hook reads ``conn.info["sqlite_begin"]``);
* PostgreSQL: a transaction-scoped advisory lock, ``pg_advisory_xact_lock``.

On SQLite, writers first queue for their turn (`service.store.writer_queue`: threads on a lock
per engine, worker processes on a lock file beside the database) before ``BEGIN IMMEDIATE``, so the
write lock is handed over at once instead of being slept on in SQLite's busy handler.

Any state read after the lock is taken is the latest committed state, so a check-then-write in
the same unit of work (e.g. "the lot is still awaiting disposition, so release it") is safe.
"""

from __future__ import annotations

from types import TracebackType

from sqlalchemy import text
from sqlalchemy.engine import Connection, Engine
from sqlmodel import Session

from service.store.audit import HEAD_KEY
from service.store.writer_queue import WriterQueue, writer_queue

WRITE_LOCK_KEY = 0x42414E44  # a fixed advisory-lock key for Bandgate record writes


class UnitOfWork:
    """``with UnitOfWork(engine) as uow: ...; uow.commit()`` -- anything not committed is rolled back."""

    def __init__(self, engine: Engine, *, write: bool = True) -> None:
        self.engine = engine
        self.write = write
        self._conn: Connection | None = None
        self._committed = False
        self._turn: WriterQueue | None = None
        self._session: Session | None = None

    def __enter__(self) -> "UnitOfWork":
        if self.write and self.engine.dialect.name == "sqlite":
            queue = writer_queue(self.engine)
            if queue.acquire():  # else, after the wait, SQLite's own lock decides
                self._turn = queue
        try:
            conn = self.engine.connect()
        except BaseException:
            self._release_turn()
            raise
        try:
            if conn.dialect.name == "sqlite" and self.write:
                conn.info["sqlite_begin"] = "BEGIN IMMEDIATE"
            self._trans = conn.begin()
            if conn.dialect.name == "postgresql" and self.write:
                conn.execute(text("SELECT pg_advisory_xact_lock(:k)"), {"k": WRITE_LOCK_KEY})
        except BaseException:
            conn.info.pop("sqlite_begin", None)
            conn.close()
            self._release_turn()
            raise
        conn.info.pop(HEAD_KEY, None)  # the audit chain's head is per transaction
        self._conn = conn
        return self

    @property
    def connection(self) -> Connection:
        """The transaction's connection, for Core statements (`service.store.upload_records`)."""
        if self._conn is None:
            raise RuntimeError("the unit of work is not open")
        return self._conn

    @property
    def session(self) -> Session:
        """An ORM session on the same transaction, made on first use."""
        if self._session is None:
            self._session = Session(bind=self.connection, expire_on_commit=False, autoflush=True)
        return self._session

    @property
    def dialect(self) -> str:
        return self.engine.dialect.name

    def flush(self) -> None:
        if self._session is not None:
            self._session.flush()

    def commit(self) -> None:
        if self._session is not None:
            self._session.flush()
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
            try:
                if self._session is not None:
                    self._session.close()
                if self._conn is not None:
                    self._conn.info.pop(HEAD_KEY, None)
                    self._conn.close()
            finally:
                self._release_turn()

    def _release_turn(self) -> None:
        if self._turn is not None:
            turn, self._turn = self._turn, None
            turn.release()
