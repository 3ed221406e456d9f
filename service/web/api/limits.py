"""Request-size limit for the API, enforced before and while the body streams in.

An ASGI middleware rather than a FastAPI dependency: FastAPI (and Starlette's multipart parser)
read the body before any dependency runs, so a limit placed there would come after the bytes were
already buffered. Here a declared ``Content-Length`` above the limit is refused at once, without
reading a byte; a body without a length (chunked) is counted as it streams and cut off as soon as it
passes the limit. Either way the answer is a ``413`` problem document and nothing is recorded: the
application's own response (if it started building one from a truncated body) is discarded.
"""

from __future__ import annotations

import json
from typing import Any

from starlette.types import ASGIApp, Message, Receive, Scope, Send

from service.web.errors import PROBLEM_BASE

_BODY_METHODS = frozenset({"POST", "PUT", "PATCH"})


class _BodyTooLarge(Exception):
    """Raised from ``receive`` once the streamed body passes the limit."""


def _problem_413(path: str, limit: int, seen: int | None, file_limit: int) -> tuple[dict[str, Any], bytes]:
    size = f"{seen:,} bytes" if seen is not None else "more than the limit"
    body = {
        "type": PROBLEM_BASE + "payload-too-large",
        "title": "Upload too large",
        "status": 413,
        "detail": f"the request body is {size}; a file may be at most {file_limit:,} bytes and a request "
        f"{limit:,} bytes (setting BANDGATE_MAX_UPLOAD_BYTES). Send a smaller file, or ask the administrator "
        "to raise the limit",
        "instance": path,
        "limit_bytes": file_limit,
    }
    start = {
        "type": "http.response.start",
        "status": 413,
        "headers": [(b"content-type", b"application/problem+json"), (b"connection", b"close")],
    }
    return start, json.dumps(body).encode()


class UploadLimitMiddleware:
    """Refuse request bodies above ``max_bytes`` on paths under ``prefix``."""

    def __init__(self, app: ASGIApp, *, max_bytes: int, file_limit: int | None = None, prefix: str = "/api/") -> None:
        self.app = app
        self.max_bytes = max_bytes
        self.file_limit = file_limit or max_bytes  # the figure quoted to the client
        self.prefix = prefix

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if (
            scope["type"] != "http"
            or scope["method"] not in _BODY_METHODS
            or not scope["path"].startswith(self.prefix)
        ):
            await self.app(scope, receive, send)
            return

        declared = _content_length(scope)
        if declared is not None and declared > self.max_bytes:
            await _send_413(send, scope["path"], self.max_bytes, declared, self.file_limit)
            return

        state = {"received": 0, "exceeded": False, "started": False}

        async def limited_receive() -> Message:
            message = await receive()
            if message["type"] == "http.request":
                state["received"] += len(message.get("body", b""))
                if state["received"] > self.max_bytes:
                    state["exceeded"] = True
                    raise _BodyTooLarge
            return message

        async def guarded_send(message: Message) -> None:
            if state["exceeded"]:
                return  # the application answered a truncated body; our 413 replaces it
            if message["type"] == "http.response.start":
                state["started"] = True
            await send(message)

        try:
            await self.app(scope, limited_receive, guarded_send)
        except Exception:
            if not state["exceeded"]:
                raise
        if state["exceeded"] and not state["started"]:
            await _send_413(send, scope["path"], self.max_bytes, None, self.file_limit)


def _content_length(scope: Scope) -> int | None:
    for name, value in scope.get("headers", ()):
        if name == b"content-length":
            try:
                return int(value)
            except ValueError:
                return None
    return None


async def _send_413(send: Send, path: str, limit: int, seen: int | None, file_limit: int) -> None:
    start, body = _problem_413(path, limit, seen, file_limit)
    start["headers"].append((b"content-length", str(len(body)).encode()))
    await send(start)
    await send({"type": "http.response.body", "body": body})
