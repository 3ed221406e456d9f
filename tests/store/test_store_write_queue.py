"""Writers of one process queue on an in-process lock before SQLite's BEGIN IMMEDIATE.

SQLite's busy handler sleeps a waiting writer in growing steps (common practice: sqlite3's
``sqliteDefaultBusyCallback`` waits 1, 2, 5, 10, ... up to 100 ms a step), so a writer that
arrives while another commits could wait far longer than the lock is held. The in-process lock
hands the write lock over at once, is released on every way out of a unit of work, and leaves
other processes to SQLite's own lock.
"""

from __future__ import annotations

import threading
import time

import pytest
from sqlalchemy import text

from service.store.audit import SYSTEM_ACTOR, append_event, check_chain
from service.store.engine import make_engine
from service.store.migrations import upgrade
from service.store.unit_of_work import UnitOfWork


@pytest.fixture
def engine(sqlite_url: str):  # type: ignore[no-untyped-def]
    upgrade(sqlite_url)
    e = make_engine(sqlite_url)
    yield e
    e.dispose()


def test_a_waiting_writer_gets_the_lock_as_soon_as_it_is_free(engine) -> None:  # type: ignore[no-untyped-def]
    holding, released_at, entered_at = threading.Event(), [0.0], [0.0]

    def first() -> None:
        with UnitOfWork(engine) as uow:
            append_event(uow.session, actor=SYSTEM_ACTOR, action="test.first", record_type="test", record_id=1)
            holding.set()
            time.sleep(0.3)
            uow.commit()
            released_at[0] = time.perf_counter()

    def second() -> None:
        holding.wait(5)
        with UnitOfWork(engine) as uow:
            entered_at[0] = time.perf_counter()
            append_event(uow.session, actor=SYSTEM_ACTOR, action="test.second", record_type="test", record_id=2)
            uow.commit()

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(10)
    assert entered_at[0] >= released_at[0] > 0
    assert entered_at[0] - released_at[0] < 0.08  # handed over, not slept on by the busy handler
    with UnitOfWork(engine, write=False) as uow:
        count, problems = check_chain(uow.session)
    assert count == 2 and problems == []


def test_the_lock_is_released_when_the_unit_of_work_fails(engine) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(RuntimeError):
        with UnitOfWork(engine) as uow:
            uow.session.connection().execute(text("SELECT 1"))
            raise RuntimeError("boom")
    done = threading.Event()

    def other_thread() -> None:
        with UnitOfWork(engine) as uow:
            append_event(uow.session, actor=SYSTEM_ACTOR, action="test.after", record_type="test", record_id=3)
            uow.commit()
        done.set()

    t = threading.Thread(target=other_thread)
    t.start()
    assert done.wait(5), "the write lock was left held after a failed unit of work"
    t.join()


def test_reads_do_not_wait_for_a_writer(engine) -> None:  # type: ignore[no-untyped-def]
    with UnitOfWork(engine) as writer:
        append_event(writer.session, actor=SYSTEM_ACTOR, action="test.hold", record_type="test", record_id=4)
        result: list[int] = []

        def reader() -> None:
            with UnitOfWork(engine, write=False) as uow:
                result.append(int(uow.session.connection().execute(text("SELECT COUNT(*) FROM audit_events")).scalar()))

        t = threading.Thread(target=reader)
        t.start()
        t.join(5)
        assert result, "a reader waited for the writer"
        writer.commit()


def test_no_writer_waits_much_longer_than_the_others_hold_the_lock(engine) -> None:  # type: ignore[no-untyped-def]
    """Three threads, eight short writes each (30 ms under the lock): with the queue, a writer waits
    for at most the two others; left to the busy handler's sleeps, some waited several times that."""
    waits: list[float] = []
    lock = threading.Lock()

    def writer(k: int) -> None:
        for i in range(8):
            t0 = time.perf_counter()
            with UnitOfWork(engine) as uow:
                waited = time.perf_counter() - t0
                append_event(uow.session, actor=SYSTEM_ACTOR, action="test.queue", record_type="test",
                             record_id=f"{k}-{i}")
                time.sleep(0.03)
                uow.commit()
            with lock:
                waits.append(waited)

    threads = [threading.Thread(target=writer, args=(k,)) for k in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(30)
    assert len(waits) == 24
    assert max(waits) < 0.3, sorted(waits)[-5:]
