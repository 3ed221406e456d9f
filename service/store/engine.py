"""Engine construction with the durability settings a GMP record needs."""

from __future__ import annotations

from sqlalchemy import event
from sqlalchemy.engine import Engine
from sqlmodel import create_engine


def _normalise_url(url: str) -> str:
    # Accept plain postgresql:// URLs and use psycopg 3, the driver we install.
    if url.startswith("postgresql://") or url.startswith("postgres://"):
        return "postgresql+psycopg://" + url.split("://", 1)[1]
    return url


def make_engine(url: str) -> Engine:
    """Create an engine; SQLite gets WAL, synchronous=FULL, foreign keys and a busy timeout."""
    url = _normalise_url(url)
    if url.startswith("sqlite"):
        engine = create_engine(
            url,
            connect_args={"check_same_thread": False, "timeout": 30, "isolation_level": None},
        )

        @event.listens_for(engine, "connect")
        def _sqlite_pragmas(dbapi_conn, _record):  # type: ignore[no-untyped-def]
            cur = dbapi_conn.cursor()
            cur.execute("PRAGMA journal_mode=WAL")
            cur.execute("PRAGMA synchronous=FULL")
            cur.execute("PRAGMA foreign_keys=ON")
            cur.execute("PRAGMA busy_timeout=30000")
            cur.close()

        @event.listens_for(engine, "begin")
        def _sqlite_begin(conn):  # type: ignore[no-untyped-def]
            # pysqlite's implicit transactions are off (isolation_level=None); we issue
            # BEGIN ourselves. Writers serialise on BEGIN IMMEDIATE in the unit of work.
            mode = conn.info.pop("sqlite_begin", "BEGIN")
            conn.exec_driver_sql(mode)

        return engine
    return create_engine(url, pool_pre_ping=True)
