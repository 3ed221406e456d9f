"""Writers of one SQLite database queue for their turn before ``BEGIN IMMEDIATE``.

SQLite lets one writer in at a time; a writer that finds the database locked sleeps in SQLite's
busy handler in growing steps (common practice: sqlite3's ``sqliteDefaultBusyCallback`` waits 1,
2, 5, 10, ... up to 100 ms a step), so under concurrent uploads a waiting writer could sleep far
longer than the lock was held. Writers therefore queue on locks that hand over at once:

* threads of one process on a lock per engine (``threading.RLock``);
* processes (``bandgate serve --workers N``) on an advisory ``flock`` of a lock file beside the
  database (``<database>-writers.lock``, created on first use; it holds no data). The kernel drops
  the lock when its process ends, however it ends.

Either wait is bounded (``WAIT_S``); after it the writer goes on and SQLite's own lock and busy
timeout decide, so a stuck peer can delay a writer but never corrupt anything. In-memory
databases and platforms without ``fcntl`` queue on the thread lock only.
"""

from __future__ import annotations

import os
import threading
import time
import weakref

from sqlalchemy.engine import Engine

try:
    import fcntl
except ImportError:  # pragma: no cover - not on Linux
    fcntl = None  # type: ignore[assignment]

WAIT_S = 30.0  # as SQLite's busy timeout
_POLL_FIRST_S, _POLL_MAX_S = 0.0002, 0.002


class WriterQueue:
    """One database's queue: ``acquire(timeout)`` (True once it is this writer's turn), ``release()``."""

    def __init__(self, lock_path: str | None) -> None:
        self.lock_path = lock_path
        self._threads = threading.RLock()
        self._depth = 0  # nested turns of the owning thread; the file lock is taken by the outermost
        self._fd: int | None = None
        self._fd_pid = 0

    def acquire(self, timeout: float = WAIT_S) -> bool:
        deadline = time.monotonic() + timeout
        if not self._threads.acquire(timeout=timeout):
            return False
        if self._depth == 0 and self.lock_path is not None and not self._lock_file(deadline):
            self._threads.release()
            return False
        self._depth += 1
        return True

    def release(self) -> None:
        self._depth -= 1
        if self._depth == 0 and self._fd is not None and fcntl is not None:
            fcntl.flock(self._fd, fcntl.LOCK_UN)
        self._threads.release()

    def _file(self) -> int:
        if self._fd is None or self._fd_pid != os.getpid():  # a forked child opens its own description
            self._fd = os.open(self.lock_path, os.O_RDWR | os.O_CREAT, 0o600)  # type: ignore[arg-type]
            self._fd_pid = os.getpid()
        return self._fd

    def _lock_file(self, deadline: float) -> bool:
        assert fcntl is not None
        fd = self._file()
        delay = _POLL_FIRST_S
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                return True
            except BlockingIOError:
                pass
            if time.monotonic() >= deadline:
                return False
            time.sleep(delay)
            delay = min(delay * 2, _POLL_MAX_S)


_queues: "weakref.WeakKeyDictionary[Engine, WriterQueue]" = weakref.WeakKeyDictionary()
_queues_guard = threading.Lock()


def lock_path_for(engine: Engine) -> str | None:
    """``<database>-writers.lock`` for a file database, None for an in-memory one (or without fcntl)."""
    database = engine.url.database
    if fcntl is None or not database or database == ":memory:" or database.startswith("file:"):
        return None
    return os.path.abspath(database) + "-writers.lock"


def writer_queue(engine: Engine) -> WriterQueue:
    """The queue of the SQLite database behind ``engine`` (one per engine)."""
    with _queues_guard:
        queue = _queues.get(engine)
        if queue is None:
            queue = _queues[engine] = WriterQueue(lock_path_for(engine))
        return queue
