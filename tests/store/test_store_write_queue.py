"""Writers queue for their turn before SQLite's BEGIN IMMEDIATE: threads on an in-process lock, processes on a lock file.

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
    assert max(waits) < 0.45, sorted(waits)[-5:]  # two others hold it 60 ms; the busy handler slept far longer


# --- worker processes: the lock file beside the database -------------------------------------------

_HOLDER = r"""
import sys, time
from service.store.audit import SYSTEM_ACTOR, append_event
from service.store.engine import make_engine
from service.store.unit_of_work import UnitOfWork
engine = make_engine(sys.argv[1])
with UnitOfWork(engine) as uow:
    append_event(uow.session, actor=SYSTEM_ACTOR, action="test.other-process", record_type="test", record_id=9)
    print("holding", flush=True)
    time.sleep(float(sys.argv[2]))
    uow.commit()
    print(f"released {time.monotonic()!r}", flush=True)
time.sleep(float(sys.argv[3]))
"""


def _holder(sqlite_url: str, hold_s: float, linger_s: float = 0.0):  # type: ignore[no-untyped-def]
    import subprocess
    import sys

    proc = subprocess.Popen([sys.executable, "-c", _HOLDER, sqlite_url, str(hold_s), str(linger_s)],
                            stdout=subprocess.PIPE, text=True)
    assert proc.stdout is not None and proc.stdout.readline().strip() == "holding"
    return proc


def test_a_writer_in_another_process_gets_the_turn_as_soon_as_it_is_free(engine, sqlite_url: str) -> None:  # type: ignore[no-untyped-def]
    """Two worker processes: the second writer is handed the lock, not slept on by the busy handler."""
    from service.store.writer_queue import lock_path_for

    proc = _holder(sqlite_url, hold_s=0.35)
    with UnitOfWork(engine) as uow:
        entered = time.monotonic()
        append_event(uow.session, actor=SYSTEM_ACTOR, action="test.this-process", record_type="test", record_id=10)
        uow.commit()
    line = proc.stdout.readline().split()  # type: ignore[union-attr]
    proc.wait(10)
    assert line[0] == "released"
    released = float(line[1])
    assert entered >= released
    # handed over (the monotonic clock is system-wide on Linux); the busy handler would next look
    # 78 ms after the release (its sleeps add up to 328 ms, then 428 ms)
    assert entered - released < 0.04
    lock_file = lock_path_for(engine)
    assert lock_file is not None and lock_file.endswith("bandgate.db-writers.lock")
    with UnitOfWork(engine, write=False) as uow:
        count, problems = check_chain(uow.session)
    assert count == 2 and problems == []


def test_a_killed_writer_process_leaves_no_lock_behind(engine, sqlite_url: str) -> None:  # type: ignore[no-untyped-def]
    import signal

    proc = _holder(sqlite_url, hold_s=30)
    t0 = time.monotonic()
    proc.send_signal(signal.SIGKILL)
    proc.wait(10)
    with UnitOfWork(engine) as uow:
        append_event(uow.session, actor=SYSTEM_ACTOR, action="test.after-kill", record_type="test", record_id=11)
        uow.commit()
    assert time.monotonic() - t0 < 5
    with UnitOfWork(engine, write=False) as uow:
        count, problems = check_chain(uow.session)
    assert count == 1 and problems == []  # the killed writer's event never committed


def test_a_nested_turn_keeps_the_file_lock_until_the_outermost_ends(engine) -> None:  # type: ignore[no-untyped-def]
    import fcntl
    import os

    from service.store.writer_queue import writer_queue

    queue = writer_queue(engine)
    assert queue.acquire(1) and queue.acquire(1)
    queue.release()
    probe = os.open(queue.lock_path, os.O_RDWR)  # type: ignore[arg-type]
    try:
        with pytest.raises(BlockingIOError):
            fcntl.flock(probe, fcntl.LOCK_EX | fcntl.LOCK_NB)  # still held by the outer turn
        queue.release()
        fcntl.flock(probe, fcntl.LOCK_EX | fcntl.LOCK_NB)  # free now
        fcntl.flock(probe, fcntl.LOCK_UN)
    finally:
        os.close(probe)
