"""Security headers on every response, and the request-size ceiling enforced while streaming.

Headers (OWASP ASVS 4.0 V14.4; OWASP Secure Headers project):

* ``Content-Security-Policy``: scripts and styles only from our own origin, no inline script
  (inline *style attributes* are allowed because server-rendered SVG plots carry them), no
  plugins, no framing (``frame-ancestors 'none'``), forms post only to us;
* ``X-Content-Type-Options: nosniff``, ``Referrer-Policy: same-origin``,
  ``X-Frame-Options: DENY`` (for old browsers), ``Cross-Origin-Opener-Policy: same-origin``,
  ``Permissions-Policy`` switching off sensors we never use;
* ``Cache-Control: no-store`` on everything except ``/static/`` (authenticated pages and API
  answers must not stay in shared or browser caches);
* ``Strict-Transport-Security`` when the request came over HTTPS.

The body ceiling answers 413 as soon as a declared ``Content-Length`` or the bytes streamed so
far exceed the limit, before anything is parsed or stored.
"""

from __future__ import annotations

import json
from collections.abc import Awaitable, Callable, MutableMapping
from typing import Any

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
ASGIApp = Callable[[Scope, Receive, Send], Awaitable[None]]

CONTENT_SECURITY_POLICY = "; ".join(
    [
        "default-src 'self'",
        "script-src 'self'",
        "style-src 'self' 'unsafe-inline'",
        "img-src 'self' data:",
        "font-src 'self'",
        "connect-src 'self'",
        "object-src 'none'",
        "base-uri 'none'",
        "form-action 'self'",
        "frame-ancestors 'none'",
    ]
)

BASE_HEADERS: tuple[tuple[bytes, bytes], ...] = (
    (b"content-security-policy", CONTENT_SECURITY_POLICY.encode()),
    (b"x-content-type-options", b"nosniff"),
    (b"referrer-policy", b"same-origin"),
    (b"x-frame-options", b"DENY"),
    (b"cross-origin-opener-policy", b"same-origin"),
    (b"permissions-policy", b"camera=(), microphone=(), geolocation=(), payment=(), usb=()"),
)


def _is_https(scope: Scope) -> bool:
    return scope.get("scheme") == "https"


class SecurityHeadersMiddleware:
    """Adds the headers above to every HTTP response (pure ASGI: no body buffering)."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        path: str = scope.get("path", "")
        https = _is_https(scope)

        async def send_with_headers(message: Message) -> None:
            if message["type"] == "http.response.start":
                headers = list(message.get("headers", []))
                present = {k.lower() for k, _ in headers}
                for name, value in BASE_HEADERS:
                    if name not in present:
                        headers.append((name, value))
                if not path.startswith("/static/"):
                    headers = [(k, v) for k, v in headers if k.lower() not in (b"cache-control", b"pragma")]
                    headers.append((b"cache-control", b"no-store"))
                    headers.append((b"pragma", b"no-cache"))
                if https and b"strict-transport-security" not in present:
                    headers.append((b"strict-transport-security", b"max-age=31536000; includeSubDomains"))
                message["headers"] = headers
            await send(message)

        await self.app(scope, receive, send_with_headers)


class BodyLimitMiddleware:
    """Refuses request bodies above ``limit`` bytes with 413, while streaming, before parsing."""

    def __init__(self, app: ASGIApp, *, limit: int) -> None:
        self.app = app
        self.limit = limit

    async def _refuse(self, scope: Scope, send: Send) -> None:
        detail = (f"the request body is larger than the limit of {self.limit} bytes; "
                  "send a smaller file (the upload limit is set by BANDGATE_MAX_UPLOAD_BYTES)")
        api = str(scope.get("path", "")).startswith("/api/")
        if api:
            body = json.dumps({
                "type": "https://bandgate.invalid/problems/payload-too-large", "title": "Upload too large",
                "status": 413, "detail": detail, "instance": scope.get("path", ""),
            }).encode()
            ctype = b"application/problem+json"
        else:
            body = f"<!doctype html><title>Upload too large</title><h1>Upload too large</h1><p>{detail}</p>".encode()
            ctype = b"text/html; charset=utf-8"
        await send({"type": "http.response.start", "status": 413,
                    "headers": [(b"content-type", ctype), (b"content-length", str(len(body)).encode()),
                                (b"connection", b"close")]})
        await send({"type": "http.response.body", "body": body})

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        for name, value in scope.get("headers", []):
            if name == b"content-length":
                try:
                    declared = int(value)
                except ValueError:
                    declared = 0
                if declared > self.limit:
                    await self._refuse(scope, send)
                    return
        received = 0
        exceeded = False
        refused = False

        async def send_guarded(message: Message) -> None:
            nonlocal refused
            if exceeded:
                # Whatever the app answers to a truncated body, the answer is 413.
                if not refused:
                    refused = True
                    await self._refuse(scope, send)
                return
            await send(message)

        async def receive_counting() -> Message:
            nonlocal received, exceeded
            message = await receive()
            if message["type"] == "http.request":
                received += len(message.get("body", b""))
                if received > self.limit:
                    exceeded = True
                    raise _BodyTooLarge(self.limit)
            return message

        try:
            await self.app(scope, receive_counting, send_guarded)
        except _BodyTooLarge:
            pass
        if exceeded and not refused:
            refused = True
            await self._refuse(scope, send)


class _BodyTooLarge(Exception):
    """Raised inside the app's body reading when the stream passes the limit."""
