"""Where short database work runs (service.web.work_placement): in place on SQLite for small payloads,
in the thread pool on PostgreSQL and for large payloads. The engines are real (creating one opens no
connection); the work records the thread it ran on."""

from __future__ import annotations

import asyncio
import threading

import pytest

from service.store.engine import make_engine
from service.web.work_placement import IN_PLACE_MAX_BYTES, run_database_work, runs_in_place


@pytest.fixture()
def sqlite_engine(tmp_path):  # type: ignore[no-untyped-def]
    engine = make_engine(f"sqlite:///{tmp_path / 'placement.db'}")
    yield engine
    engine.dispose()


def _thread_of_work(engine, payload_bytes: int) -> tuple[int, int]:  # type: ignore[no-untyped-def]
    async def go() -> tuple[int, int]:
        here = threading.get_ident()
        ran_on = await run_database_work(engine, threading.get_ident, payload_bytes=payload_bytes)
        return here, ran_on

    return asyncio.run(go())


def test_small_work_on_sqlite_runs_on_the_event_loop_thread(sqlite_engine) -> None:  # type: ignore[no-untyped-def]
    assert runs_in_place(sqlite_engine, payload_bytes=70_000)
    here, ran_on = _thread_of_work(sqlite_engine, 70_000)
    assert ran_on == here


def test_a_large_payload_goes_to_the_thread_pool(sqlite_engine) -> None:  # type: ignore[no-untyped-def]
    assert not runs_in_place(sqlite_engine, payload_bytes=IN_PLACE_MAX_BYTES + 1)
    here, ran_on = _thread_of_work(sqlite_engine, IN_PLACE_MAX_BYTES + 1)
    assert ran_on != here


def test_postgresql_work_goes_to_the_thread_pool() -> None:
    engine = make_engine("postgresql+psycopg://postgres@127.0.0.1:5432/test")  # no connection is opened
    try:
        assert not runs_in_place(engine, payload_bytes=0)
        here, ran_on = _thread_of_work(engine, 0)
        assert ran_on != here
    finally:
        engine.dispose()


def test_errors_raised_by_the_work_reach_the_caller_in_both_places(sqlite_engine) -> None:  # type: ignore[no-untyped-def]
    def fail() -> None:
        raise ValueError("refused")

    for size in (0, IN_PLACE_MAX_BYTES + 1):
        with pytest.raises(ValueError, match="refused"):
            asyncio.run(run_database_work(sqlite_engine, fail, payload_bytes=size))
