"""Outbound decision notices: signed with HMAC-SHA256 over the body, retried, logged; a receiver on 127.0.0.1."""

from __future__ import annotations

import json
import threading
from collections.abc import Iterator
from datetime import UTC, datetime, timedelta
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from api_factories import ESTER_BANDS, Lab, lab, lot_body, spectrum_csv, upload  # noqa: F401

from service import errors as e
from service.services import notices


class Receiver:
    """An HTTP receiver on 127.0.0.1 answering a scripted sequence of statuses."""

    def __init__(self, statuses: list[int]) -> None:
        self.statuses = list(statuses)
        self.received: list[tuple[dict[str, str], bytes]] = []
        outer = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:  # noqa: N802
                body = self.rfile.read(int(self.headers.get("Content-Length", 0)))
                outer.received.append(({k: v for k, v in self.headers.items()}, body))
                self.send_response(outer.statuses.pop(0) if outer.statuses else 200)
                self.send_header("Content-Length", "0")
                self.end_headers()

            def log_message(self, *_args: object) -> None:
                pass

        self.server = ThreadingHTTPServer(("127.0.0.1", 0), Handler)
        self.url = f"http://127.0.0.1:{self.server.server_address[1]}/bandgate"
        self.thread = threading.Thread(target=self.server.serve_forever, daemon=True)
        self.thread.start()

    def close(self) -> None:
        self.server.shutdown()
        self.server.server_close()


@pytest.fixture
def receiver() -> Iterator[Receiver]:
    r = Receiver([500, 200])
    yield r
    r.close()


def test_a_decision_is_noticed_signed_retried_and_logged(lab: Lab, receiver: Receiver) -> None:
    code_before = lab.client.post("/api/v1/lots", json=lot_body(containers=1), headers=lab.auth()).json()["code"]
    upload(lab, code_before, container=1, data=spectrum_csv(ESTER_BANDS, seed=21))  # decided before registering
    secret = notices.register_target(lab.engine, client_name="lis", url=receiver.url)
    code = lab.client.post("/api/v1/lots", json=lot_body(containers=1), headers=lab.auth()).json()["code"]
    r = upload(lab, code, container=1, data=spectrum_csv(ESTER_BANDS, seed=22))
    assert r.json()["lot_state"] == "awaiting_disposition"

    assert notices.queue_decisions(lab.engine) == 1  # only the lot decided after registration
    assert notices.queue_decisions(lab.engine) == 0  # once per lot and event
    now = datetime.now(UTC)
    first = notices.deliver_due(lab.engine, now=now)
    assert [(o.delivered, o.status_code) for o in first] == [(False, 500)]
    assert notices.deliver_due(lab.engine, now=now + timedelta(seconds=5)) == []  # not due yet
    second = notices.deliver_due(lab.engine, now=now + notices.RETRY_DELAYS[0] + timedelta(seconds=1))
    assert [(o.delivered, o.status_code) for o in second] == [(True, 200)]

    assert len(receiver.received) == 2
    headers, body = receiver.received[-1]
    assert receiver.received[0][1] == body  # the retry sends the very same bytes
    assert notices.verify(body, secret, headers["Bandgate-Signature"])
    assert not notices.verify(body + b" ", secret, headers["Bandgate-Signature"])
    doc = json.loads(body)
    assert doc["event"] == "lot.conforms" and doc["lot"] == code and doc["state"] == "awaiting_disposition"
    assert "not a release" in doc["caution"] and headers["Bandgate-Event"] == "lot.conforms"

    log = notices.delivery_log(lab.engine)
    mine = [row for row in log if row["lot_code"] == code]
    assert [row["status_code"] for row in mine] == [200, 500]  # newest first
    assert mine[0]["delivered_at"] is not None


def test_an_unreachable_receiver_is_retried_then_given_up(lab: Lab) -> None:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        dead = f"http://127.0.0.1:{s.getsockname()[1]}/nothing"  # closed again before use
    notices.disable_target(lab.engine, client_name="lis")  # its receiver from the test above is gone
    notices.register_target(lab.engine, client_name="dashboard", url=dead)
    code = lab.client.post("/api/v1/lots", json=lot_body(containers=1), headers=lab.auth()).json()["code"]
    upload(lab, code, container=1, data=spectrum_csv(ESTER_BANDS, seed=23))
    assert notices.queue_decisions(lab.engine) >= 1
    at = datetime.now(UTC)
    attempts = 0
    for _ in range(len(notices.RETRY_DELAYS) + 1):
        for o in notices.deliver_due(lab.engine, now=at, timeout=1.0):
            attempts += 1
            assert not o.delivered and o.error
        at += timedelta(days=1)
    assert attempts == len(notices.RETRY_DELAYS) + 1
    assert notices.deliver_due(lab.engine, now=at + timedelta(days=30)) == []
    rows = [r for r in notices.delivery_log(lab.engine) if r["lot_code"] == code and r["client_id"].endswith(
        notices.client_key(lab.engine, "dashboard").split(":")[1])]
    assert rows and all(r["gave_up_at"] is not None for r in rows)


def test_a_target_must_be_an_http_url_and_a_known_client(lab: Lab) -> None:
    with pytest.raises(e.InvalidInput, match="http"):
        notices.register_target(lab.engine, client_name="lis", url="file:///etc/passwd")
    with pytest.raises(e.NotFound):
        notices.register_target(lab.engine, client_name="nobody", url="http://127.0.0.1:9/")
