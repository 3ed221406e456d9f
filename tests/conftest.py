"""Shared fixtures: real databases (a SQLite file, and PostgreSQL when BANDGATE_TEST_POSTGRES_URL is set).

`db_url` is parametrised over both back-ends, so every database test runs on SQLite always and on
PostgreSQL where it is available. Without the variable the PostgreSQL runs are skipped with a
visible reason; with BANDGATE_REQUIRE_POSTGRES=1 (set by .ci/run) a skip is a failure.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest

PG_URL = os.environ.get("BANDGATE_TEST_POSTGRES_URL", "")
REQUIRE_PG = os.environ.get("BANDGATE_REQUIRE_POSTGRES") == "1"
SHARED_DATA = Path(__file__).resolve().parents[1].parent / "shared" / "data"
TEST_DATA = Path(__file__).resolve().parent / "data"

_pg_tests_run = 0


def _pg_admin_url() -> str:
    return PG_URL.replace("postgresql+psycopg://", "postgresql://")


def _pg_exec(sql: str) -> None:
    import psycopg

    with psycopg.connect(_pg_admin_url(), autocommit=True) as conn:
        conn.execute(sql)


def _pg_url_for(dbname: str) -> str:
    base, _, _ = PG_URL.rpartition("/")
    return f"{base}/{dbname}"


def _need_postgres() -> None:
    if not PG_URL:
        if REQUIRE_PG:
            pytest.fail("BANDGATE_REQUIRE_POSTGRES=1 but BANDGATE_TEST_POSTGRES_URL is not set")
        pytest.skip("PostgreSQL not configured: set BANDGATE_TEST_POSTGRES_URL (as .ci/run does) to run this")


@pytest.fixture
def sqlite_url(tmp_path: Path) -> str:
    return f"sqlite:///{tmp_path / 'bandgate.db'}"


@pytest.fixture
def postgres_url() -> Iterator[str]:
    """A fresh, empty PostgreSQL database for one test, dropped afterwards."""
    global _pg_tests_run
    _need_postgres()
    name = f"bandgate_t_{uuid.uuid4().hex[:12]}"
    _pg_exec(f'CREATE DATABASE "{name}"')
    _pg_tests_run += 1
    try:
        yield _pg_url_for(name)
    finally:
        _pg_exec(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def empty_db_url(request: pytest.FixtureRequest) -> str:
    """An empty database of each back-end (no migrations run)."""
    if request.param == "sqlite":
        return request.getfixturevalue("sqlite_url")
    return request.getfixturevalue("postgres_url")


@pytest.fixture
def db_url(empty_db_url: str) -> str:
    """A database of each back-end, migrated to head."""
    from service.store.migrations import upgrade

    upgrade(empty_db_url)
    return empty_db_url


@pytest.fixture
def shared_data() -> Path:
    if not SHARED_DATA.is_dir():
        pytest.skip(f"shared data folder {SHARED_DATA} is absent (CI always has it)")
    return SHARED_DATA


def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    if REQUIRE_PG and _pg_tests_run == 0 and session.testscollected > 0 and not session.config.option.collectonly:
        print("\nBANDGATE_REQUIRE_POSTGRES=1 but no PostgreSQL-backed test ran: failing the run")
        session.exitstatus = 1
