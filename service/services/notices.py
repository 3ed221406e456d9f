"""Outbound notices: tell a client's system when a lot reaches a decision.

A client may register one URL (``bandgate notices target``). When a lot enters a state that
needs or records a decision -- conforms and awaits QA disposition, failed and awaits review,
released, rejected -- a JSON notice is queued once per client, lot and event, then POSTed with
``Bandgate-Signature: sha256=<hex>`` = HMAC-SHA256 over the exact body bytes under the client's
own notice secret. A delivery counts when the receiver answers 2xx; otherwise it is retried on a
growing schedule and given up after the last one. Every attempt is logged (status, error, time).

Queueing scans lot states rather than hooking into the use cases, so a decision taken anywhere
(pages, CLI, API) is noticed; only lots whose state changed after the target was registered are
announced, so registering a target does not replay history.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import secrets
import threading
import time
import urllib.error
import urllib.request
from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from typing import Any
from urllib.parse import urlsplit

from sqlalchemy.engine import Engine

from service import errors as e
from service.store import notices as store

SIGNATURE_HEADER = "Bandgate-Signature"
EVENTS: dict[str, str] = {
    "awaiting_disposition": "lot.conforms",
    "awaiting_review": "lot.failed",
    "released": "lot.released",
    "rejected": "lot.rejected",
}
RETRY_DELAYS = (timedelta(seconds=30), timedelta(minutes=2), timedelta(minutes=10), timedelta(hours=1),
                timedelta(hours=6))
LEASE = timedelta(minutes=2)
CAUTION = ("A computed result is advice to the quality unit, not a release; only a signed QA disposition "
           "releases a lot.")

Sender = Callable[[str, bytes, dict[str, str], float], int]


def sign(body: bytes, secret: str) -> str:
    """The signature header value: ``sha256=`` + hex HMAC-SHA256 of ``body`` under ``secret``."""
    return "sha256=" + hmac.new(secret.encode(), body, hashlib.sha256).hexdigest()


def verify(body: bytes, secret: str, header: str) -> bool:
    """Constant-time check a receiver can use (and the tests do)."""
    return hmac.compare_digest(sign(body, secret), header or "")


def _check_url(url: str) -> str:
    parts = urlsplit(url)
    if parts.scheme not in ("http", "https") or not parts.hostname:
        raise e.InvalidInput(
            f"the notice URL {url!r} is not an absolute http(s) URL; give one like https://lis.example/bandgate",
            fields=[e.FieldProblem(path="url", message="absolute http or https URL")],
        )
    return url


def client_key(engine: Engine, client_name: str) -> str:
    """The key notices and idempotency use for an API client (``client:<id>``)."""
    from service.services.security_clients import list_clients

    for row in list_clients(engine):
        if row["name"] == client_name:
            return f"client:{row['id']}"
    raise e.NotFound(f"there is no API client {client_name!r}; create one with `bandgate token create`")


def register_target(engine: Engine, *, client_name: str, url: str, actor: Any = None) -> str:
    """Register (or replace) a client's notice URL; returns the new signing secret (shown once).

    The change is audited (who, which client, which URL; never the secret).
    """
    from service.store.audit import SYSTEM_ACTOR, append_event
    from service.store.unit_of_work import UnitOfWork

    url = _check_url(url)
    key = client_key(engine, client_name)
    secret = secrets.token_urlsafe(32)
    with UnitOfWork(engine) as uow:
        store.set_target(uow.session.connection(), client_id=key, url=url, secret=secret, now=datetime.now(UTC))
        append_event(uow.session, actor=actor or SYSTEM_ACTOR, action="api-notice-target-set",
                     record_type="api_client", record_id=key.split(":", 1)[1], new={"url": url})
        uow.commit()
    return secret


def disable_target(engine: Engine, *, client_name: str, actor: Any = None) -> bool:
    from service.store.audit import SYSTEM_ACTOR, append_event
    from service.store.unit_of_work import UnitOfWork

    key = client_key(engine, client_name)
    with UnitOfWork(engine) as uow:
        done = store.disable_target(uow.session.connection(), client_id=key)
        if done:
            append_event(uow.session, actor=actor or SYSTEM_ACTOR, action="api-notice-target-disabled",
                         record_type="api_client", record_id=key.split(":", 1)[1], new={"active": False})
        uow.commit()
    return done


def notice_body(*, lot: dict[str, Any], event: str) -> str:
    changed = lot["state_changed_at"]
    if isinstance(changed, datetime) and changed.tzinfo is None:
        changed = changed.replace(tzinfo=UTC)
    doc = {
        "event": event, "lot": lot["code"], "material": lot["material"], "state": lot["state"],
        "state_changed_at": changed.isoformat() if isinstance(changed, datetime) else str(changed),
        "href": f"/api/v1/lots/{lot['code']}", "caution": CAUTION,
    }
    return json.dumps(doc, sort_keys=True, separators=(",", ":"))


def queue_decisions(engine: Engine, *, now: datetime | None = None) -> int:
    """Queue a notice for every lot that reached a decision state since each target registered."""
    now = now or datetime.now(UTC)
    queued = 0
    with engine.begin() as conn:
        for target in store.active_targets(conn):
            since = target.created_at
            for lot in store.lots_in_states_since(conn, states=tuple(EVENTS), since=since):
                event = EVENTS[lot["state"]]
                body = notice_body(lot=lot, event=event)
                # one notice per entry into the state (a lot can fail, be retested and fail again)
                key = f"{event}@{json.loads(body)['state_changed_at']}"
                queued += store.enqueue(conn, client_id=target.client_id, lot_code=lot["code"], event=key,
                                        body=body, now=now)
    return queued


def http_post(url: str, body: bytes, headers: dict[str, str], timeout: float) -> int:
    """POST with the standard library; returns the status (raises OSError on no answer)."""
    req = urllib.request.Request(url, data=body, headers=headers, method="POST")
    try:
        with urllib.request.urlopen(req, timeout=timeout) as resp:  # noqa: S310 - URL checked at registration
            return int(resp.status)
    except urllib.error.HTTPError as exc:
        return int(exc.code)


@dataclass(frozen=True, kw_only=True)
class DeliveryOutcome:
    notice_id: int
    delivered: bool
    status_code: int | None
    error: str | None


def deliver_due(engine: Engine, *, now: datetime | None = None, send: Sender = http_post,
                timeout: float = 5.0) -> list[DeliveryOutcome]:
    """Attempt every notice that is due; log each attempt and schedule the next or give up."""
    now = now or datetime.now(UTC)
    outcomes: list[DeliveryOutcome] = []
    with engine.begin() as conn:
        due = store.due(conn, now=now)
    for notice in due:
        with engine.begin() as conn:
            if not store.lease(conn, notice_id=notice.id, attempts=notice.attempts, until=now + LEASE):
                continue  # another dispatcher has it
            target = store.target_for(conn, notice.client_id)
        body = notice.body.encode()
        status: int | None = None
        error: str | None = None
        t0 = time.perf_counter()
        if target is None or not target.active:
            error = "no active notice target for this client"
        else:
            headers = {"Content-Type": "application/json", SIGNATURE_HEADER: sign(body, target.secret),
                       "Bandgate-Notice-Id": str(notice.id), "Bandgate-Event": notice.event.split("@")[0]}
            try:
                status = send(target.url, body, headers, timeout)
            except OSError as exc:
                error = f"{type(exc).__name__}: {exc}"[:500]
        delivered = status is not None and 200 <= status < 300
        if status is not None and not delivered:
            error = f"receiver answered {status}"
        attempt_no = notice.attempts + 1
        retry = None if delivered or attempt_no > len(RETRY_DELAYS) else now + RETRY_DELAYS[attempt_no - 1]
        with engine.begin() as conn:
            store.record_attempt(conn, notice_id=notice.id, at=now, status_code=status, error=error,
                                 duration_ms=(time.perf_counter() - t0) * 1e3, delivered=delivered,
                                 next_attempt_at=retry)
        outcomes.append(DeliveryOutcome(notice_id=notice.id, delivered=delivered, status_code=status, error=error))
    return outcomes


def delivery_log(engine: Engine, *, client_id: str | None = None, limit: int = 100) -> list[dict[str, Any]]:
    with engine.connect() as conn:
        return store.delivery_log(conn, client_id=client_id, limit=limit)


class Dispatcher:
    """A daemon thread that queues and delivers notices every ``interval`` seconds (or when woken)."""

    def __init__(self, engine: Engine, *, interval: float = 5.0) -> None:
        self.engine = engine
        self.interval = interval
        self._wake = threading.Event()
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def start(self) -> None:
        if self._thread is None:
            self._thread = threading.Thread(target=self._loop, name="bandgate-notices", daemon=True)
            self._thread.start()

    def wake(self) -> None:
        self._wake.set()

    def stop(self) -> None:
        self._stop.set()
        self._wake.set()
        if self._thread is not None:
            self._thread.join(timeout=10)

    def _loop(self) -> None:
        import logging

        log = logging.getLogger("bandgate.notices")
        while not self._stop.is_set():
            try:
                queue_decisions(self.engine)
                deliver_due(self.engine)
            except Exception:  # noqa: BLE001 - the loop must survive a bad moment and try again
                log.exception("notice dispatch failed; will retry")
            self._wake.wait(self.interval)
            self._wake.clear()
