"""Where a request's synchronous database work runs: on the event loop, or in the thread pool.

FastAPI runs a plain ``def`` endpoint in a thread pool so that the event loop stays free while the
endpoint waits. For short work on the SQLite default that costs more than it saves: the work waits
on nothing but a local file (reads never wait in WAL mode; a write waits at most for one other
writer's transaction, bounded by the writer queue), and handing it to a thread and back, with the
interpreter lock passed between the loop, the pool threads and the other requests' bodies arriving,
made an upload cost about half as much server CPU again as the same work done in place (measured
with `bandgate bench --only http`; docs/api.md, "Performance").

So work is done **in place** when the engine is SQLite and the request's payload is small (a
spectrum file of up to `IN_PLACE_MAX_BYTES`; reading and evaluating such a file takes a few
milliseconds), and in the thread pool otherwise: on PostgreSQL (every statement is a network round
trip that should not hold up the loop) and for large files (a 10 MB file takes long enough to read
that the loop would stall for everyone else). A deployment on SQLite runs several worker processes
(`deploy/`), so one process busy with an upload does not hold up the others.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TypeVar

from sqlalchemy.engine import Engine
from starlette.concurrency import run_in_threadpool

IN_PLACE_MAX_BYTES = 512 * 1024

T = TypeVar("T")


def runs_in_place(engine: Engine, *, payload_bytes: int = 0) -> bool:
    """True if work on ``engine`` for a payload of ``payload_bytes`` is done on the event loop."""
    return engine.dialect.name == "sqlite" and payload_bytes <= IN_PLACE_MAX_BYTES


async def run_database_work(engine: Engine, work: Callable[[], T], *, payload_bytes: int = 0) -> T:
    """Run ``work`` (synchronous, using ``engine``) in place or in the thread pool; see the module text."""
    if runs_in_place(engine, payload_bytes=payload_bytes):
        return work()
    return await run_in_threadpool(work)
