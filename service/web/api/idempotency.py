"""`Idempotency-Key` on API writes: a retry replays the first answer instead of writing twice.

Keys are scoped to the calling client. The request's fingerprint is a SHA-256 over the method, the
path and the *parsed* payload (form fields, and each uploaded file's SHA-256), not the raw bytes, so
a retry with a new multipart boundary is still the same request. Outcomes:

- first use: the write runs; the key is marked done inside the record's own transaction (see
  `service.store.idempotency`), and the answer is stored with it, then sent;
- same key, same payload, answered: the stored answer is replayed, with ``Idempotent-Replayed: true``;
- same key, same payload, still running: ``409`` (retry after a moment);
- same key, different payload: ``422``.

A write that recorded nothing (refused input, unknown lot, ...) releases its key, so a corrected
retry runs afresh; an answer that did record something (a lot, a measurement, including a rejected
upload) is kept and replayed.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from typing import Any

from fastapi import Request
from fastapi.responses import JSONResponse

from service import errors as e
from service.services import api_requests as store
from service.web.api.access import caller_key
from service.web.auth import Principal

HEADER = "Idempotency-Key"
STALE_AFTER = timedelta(minutes=5)
MAX_KEY_LENGTH = 255


class IdempotencyKeyInFlight(e.Conflict):
    code = "idempotency-key-in-flight"
    title = "The first request with this Idempotency-Key is still running"


class IdempotencyKeyReused(e.InvalidInput):
    code = "idempotency-key-reused"
    title = "Idempotency-Key already used for a different request"


class IdempotencyAnswerLost(e.Conflict):
    code = "idempotency-answer-lost"
    title = "The first request was recorded but its answer was not kept"


class BadIdempotencyKey(e.InvalidInput):
    code = "invalid-idempotency-key"
    title = "Idempotency-Key is not valid"


@dataclass(frozen=True, kw_only=True)
class Answer:
    """What a write answers: status, JSON body, and whether it left a record behind."""

    status_code: int
    body: dict[str, Any]
    recorded: bool = True
    headers: dict[str, str] | None = None

    def response(self, *, replayed: bool = False) -> JSONResponse:
        media = "application/problem+json" if self.status_code >= 400 else "application/json"
        headers = dict(self.headers or {})
        if replayed:
            headers["Idempotent-Replayed"] = "true"
        return JSONResponse(self.body, status_code=self.status_code, media_type=media, headers=headers)


def fingerprint(method: str, path: str, payload: dict[str, Any]) -> str:
    canonical = json.dumps({"method": method, "path": path, "payload": payload}, sort_keys=True, default=str)
    return hashlib.sha256(canonical.encode()).hexdigest()


class Write:
    """One write request under an optional idempotency key; ``run(action)`` answers it."""

    def __init__(self, request: Request, principal: Principal,
                 payload: dict[str, Any] | Callable[[], dict[str, Any]]) -> None:
        """``payload``: the parsed request, or a function giving it; it is needed (and a function
        called) only when the request carries an `Idempotency-Key`."""
        self.engine = request.app.state.engine
        self.principal = principal
        self.key = _key(request)
        self.payload = payload
        self.method = request.method
        self.path = request.url.path

    def run(self, action: Callable[[], Answer]) -> JSONResponse:
        if self.key is None:
            return action().response()
        payload = self.payload() if callable(self.payload) else self.payload
        claimed = store.claim(
            self.engine, client_id=caller_key(self.principal), key=self.key, method=self.method,
            path=self.path, request_hash=fingerprint(self.method, self.path, payload), now=datetime.now(UTC),
            stale_after=STALE_AFTER,
        )
        if isinstance(claimed, store.Replay):
            return Answer(status_code=claimed.status_code, body=claimed.body,
                          headers=claimed.headers).response(replayed=True)
        if isinstance(claimed, store.InFlight):
            raise IdempotencyKeyInFlight(
                f"a request with Idempotency-Key '{self.key}' has been running since "
                f"{claimed.since.isoformat(timespec='seconds')}; retry in a moment to get its answer"
            )
        if isinstance(claimed, store.Mismatch):
            raise IdempotencyKeyReused(
                f"Idempotency-Key '{self.key}' was first used for {claimed.method} {claimed.path} with a "
                "different payload; use a new key for a new request",
                fields=[e.FieldProblem(path=f"header.{HEADER}", message="already used for a different payload")],
            )
        if isinstance(claimed, store.AnswerLost):
            what = f"{claimed.record_type} {claimed.record_id}" if claimed.record_type else "a record"
            raise IdempotencyAnswerLost(
                f"the first request with Idempotency-Key '{self.key}' was recorded ({what}) but its answer "
                "was not kept; read the record instead of sending the request again"
            )
        claim_id = claimed.claim_id
        try:
            with store.bind_on_commit(claim_id) as binding:
                answer = action()
        except BaseException:
            store.release(self.engine, claim_id=claim_id)  # deletes only a claim nothing committed under
            raise
        if answer.recorded or binding.bound:
            store.complete(self.engine, claim_id=claim_id, status_code=answer.status_code, body=answer.body,
                           headers=answer.headers, now=datetime.now(UTC))
        else:
            store.release(self.engine, claim_id=claim_id)
        return answer.response()


def _key(request: Request) -> str | None:
    raw = request.headers.get(HEADER)
    if raw is None:
        return None
    key = raw.strip()
    if not key or len(key) > MAX_KEY_LENGTH or not key.isascii() or not key.isprintable():
        raise BadIdempotencyKey(
            f"the {HEADER} header must be 1 to {MAX_KEY_LENGTH} printable ASCII characters "
            "(a UUID is a good choice)",
            fields=[e.FieldProblem(path=f"header.{HEADER}", message="1-255 printable ASCII characters")],
        )
    return key
