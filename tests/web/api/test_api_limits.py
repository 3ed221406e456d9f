"""The upload limit is enforced before the body is read: by Content-Length, and while streaming."""

from __future__ import annotations

import asyncio
from typing import Any

from service.web.api.limits import UploadLimitMiddleware


class _Recorder:
    """A downstream ASGI app that reads the whole body and answers 201 with its length."""

    def __init__(self) -> None:
        self.called = False
        self.bytes_read = 0

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        self.called = True
        more = True
        while more:
            msg = await receive()
            self.bytes_read += len(msg.get("body", b""))
            more = msg.get("more_body", False)
        await send({"type": "http.response.start", "status": 201, "headers": []})
        await send({"type": "http.response.body", "body": str(self.bytes_read).encode()})


def _run(mw: UploadLimitMiddleware, *, path: str, chunks: list[bytes], headers: list[tuple[bytes, bytes]]) -> tuple[int, bytes, int]:
    sent: list[dict[str, Any]] = []
    pulled = {"n": 0}

    async def receive() -> dict[str, Any]:
        i = pulled["n"]
        pulled["n"] += 1
        if i < len(chunks):
            return {"type": "http.request", "body": chunks[i], "more_body": i < len(chunks) - 1}
        return {"type": "http.disconnect"}

    async def send(msg: dict[str, Any]) -> None:
        sent.append(msg)

    scope = {"type": "http", "method": "POST", "path": path, "headers": headers}
    asyncio.run(mw(scope, receive, send))
    status = sent[0]["status"]
    body = b"".join(m.get("body", b"") for m in sent[1:])
    return status, body, pulled["n"]


def test_declared_length_above_limit_is_refused_without_reading_the_body() -> None:
    app = _Recorder()
    mw = UploadLimitMiddleware(app, max_bytes=1000)
    status, body, pulled = _run(mw, path="/api/v1/lots/X/measurements", chunks=[b"x" * 2000],
                                headers=[(b"content-length", b"2000")])
    assert status == 413 and pulled == 0 and not app.called
    assert b"payload-too-large" in body and b"1,000 bytes" in body


def test_streamed_body_is_cut_off_as_soon_as_it_passes_the_limit() -> None:
    app = _Recorder()
    mw = UploadLimitMiddleware(app, max_bytes=1000)
    chunks = [b"x" * 400] * 10  # 4,000 bytes, no Content-Length (chunked)
    status, body, pulled = _run(mw, path="/api/v1/evaluate", chunks=chunks, headers=[])
    assert status == 413 and b"payload-too-large" in body
    assert pulled == 3  # stopped at the chunk that crossed 1,000 bytes; the rest was never read
    assert app.bytes_read <= 800  # the app never saw the chunk that crossed the limit


def test_body_within_limit_and_paths_outside_the_api_pass_through() -> None:
    app = _Recorder()
    mw = UploadLimitMiddleware(app, max_bytes=1000)
    status, body, _ = _run(mw, path="/api/v1/lots", chunks=[b"x" * 500, b"y" * 500],
                           headers=[(b"content-length", b"1000")])
    assert (status, body) == (201, b"1000")
    app2 = _Recorder()
    status, _, _ = _run(UploadLimitMiddleware(app2, max_bytes=10), path="/login", chunks=[b"x" * 100], headers=[])
    assert status == 201 and app2.bytes_read == 100
