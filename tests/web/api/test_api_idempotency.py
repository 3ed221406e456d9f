"""Idempotency-Key: replay, conflicting payload, in flight, scope per client, and the key bound to
the record's own transaction."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from api_factories import Lab, bare_lab, lot_body  # noqa: F401 - fixture

from service import services as uc
from service.services import api_requests as keys
from service.web.errors import PROBLEM_BASE


def _post(lab: Lab, body: dict, key: str | None, token: str | None = None):  # type: ignore[no-untyped-def]
    headers = lab.auth(token)
    if key is not None:
        headers["Idempotency-Key"] = key
    return lab.client.post("/api/v1/lots", json=body, headers=headers)


def test_a_retry_replays_the_first_answer_and_writes_nothing(bare_lab: Lab) -> None:
    before = _lots(bare_lab)
    first = _post(bare_lab, lot_body(), "k-1")
    assert first.status_code == 201 and "Idempotent-Replayed" not in first.headers
    again = _post(bare_lab, lot_body(), "k-1")
    assert again.status_code == 201 and again.headers["Idempotent-Replayed"] == "true"
    assert again.json() == first.json() and again.headers["location"] == first.headers["location"]
    assert _lots(bare_lab) == before + 1
    assert _post(bare_lab, lot_body(), None).status_code == 201  # no key: a second lot
    assert _lots(bare_lab) == before + 2


def test_the_same_key_with_a_different_payload_is_422(bare_lab: Lab) -> None:
    assert _post(bare_lab, lot_body(), "k-2").status_code == 201
    before = _lots(bare_lab)
    r = _post(bare_lab, lot_body(containers=5), "k-2")
    assert r.status_code == 422 and r.json()["type"] == PROBLEM_BASE + "idempotency-key-reused"
    assert r.json()["errors"][0]["path"] == "header.Idempotency-Key" and "new key" in r.json()["detail"]
    assert _lots(bare_lab) == before


def test_a_retry_while_the_first_is_in_flight_is_409(bare_lab: Lab) -> None:
    body = lot_body()
    before = _lots(bare_lab)
    # claim a key exactly as a running request does, then retry it over HTTP
    from service.web.api.idempotency import fingerprint

    client_id = _client_key(bare_lab)
    claimed = keys.claim(bare_lab.engine, client_id=client_id, key="k-4", method="POST", path="/api/v1/lots",
                         request_hash=fingerprint("POST", "/api/v1/lots", body), now=datetime.now(UTC),
                         stale_after=timedelta(minutes=5))
    assert isinstance(claimed, keys.Claimed)
    r = _post(bare_lab, body, "k-4")
    assert r.status_code == 409 and r.json()["type"] == PROBLEM_BASE + "idempotency-key-in-flight"
    assert "retry in a moment" in r.json()["detail"]
    assert _lots(bare_lab) == before


def test_keys_are_scoped_per_client(bare_lab: Lab) -> None:
    from service.services.security_clients import create_token

    other = create_token(bare_lab.engine, client="second-lis", scopes="submit")
    a = _post(bare_lab, lot_body(), "shared")
    b = _post(bare_lab, lot_body(), "shared", token=other)
    assert a.status_code == b.status_code == 201 and a.json()["code"] != b.json()["code"]
    assert "Idempotent-Replayed" not in b.headers


def test_a_request_that_recorded_nothing_releases_its_key(bare_lab: Lab) -> None:
    r = _post(bare_lab, lot_body(material="NO-SUCH"), "k-5")
    assert r.status_code == 404
    r = _post(bare_lab, lot_body(), "k-5")  # corrected payload, same key: runs afresh
    assert r.status_code == 201 and "Idempotent-Replayed" not in r.headers


def test_the_key_commits_with_the_record_and_not_without_it(bare_lab: Lab) -> None:
    from service.web.api.idempotency import fingerprint

    client_id, body = _client_key(bare_lab), lot_body(supplier_lot="crash-window")
    h = fingerprint("POST", "/api/v1/lots", body)
    now = datetime.now(UTC)
    # the use case fails before its commit: the key stays in flight (nothing was written)
    c1 = keys.claim(bare_lab.engine, client_id=client_id, key="k-6", method="POST", path="/api/v1/lots",
                    request_hash=h, now=now, stale_after=timedelta(minutes=5))
    with keys.bind_on_commit(c1.claim_id) as binding:  # type: ignore[union-attr]
        try:
            uc.receive_lot(bare_lab.engine, bare_lab.qa, material_code="NO-SUCH", supplier_name="x",
                           supplier_lot="y", containers=1, received_on=now.date())
        except Exception:
            pass
    assert not binding.bound
    # the use case commits but the process dies before the answer is stored: the record and the
    # key's completion committed together, so a retry is told which record exists -- no second lot
    c2 = keys.claim(bare_lab.engine, client_id=client_id, key="k-7", method="POST", path="/api/v1/lots",
                    request_hash=h, now=now, stale_after=timedelta(minutes=5))
    with keys.bind_on_commit(c2.claim_id) as binding:  # type: ignore[union-attr]
        lot = uc.receive_lot(bare_lab.engine, bare_lab.qa, material_code=body["material"],
                             supplier_name=body["supplier"], supplier_lot=body["supplier_lot"],
                             containers=body["containers"], received_on=now.date())
    assert binding.bound
    r = _post(bare_lab, body, "k-7")
    assert r.status_code == 409 and r.json()["type"] == PROBLEM_BASE + "idempotency-answer-lost"
    assert f"lot {lot.id}" in r.json()["detail"]
    assert uc.list_lots(bare_lab.engine, search="crash-window")[1] == 1


def test_a_stale_claim_is_taken_over(bare_lab: Lab) -> None:
    from service.web.api.idempotency import fingerprint

    body = lot_body()
    old = datetime.now(UTC) - timedelta(hours=1)
    keys.claim(bare_lab.engine, client_id=_client_key(bare_lab), key="k-8", method="POST", path="/api/v1/lots",
               request_hash=fingerprint("POST", "/api/v1/lots", body), now=old, stale_after=timedelta(minutes=5))
    r = _post(bare_lab, body, "k-8")
    assert r.status_code == 201


def test_a_malformed_key_is_422(bare_lab: Lab) -> None:
    r = _post(bare_lab, lot_body(), "x" * 300)
    assert r.status_code == 422 and r.json()["type"] == PROBLEM_BASE + "invalid-idempotency-key"


def _lots(lab: Lab) -> int:
    return uc.list_lots(lab.engine)[1]


def _client_key(lab: Lab) -> str:
    from service.services.security_clients import client_for_token

    client = client_for_token(lab.engine, lab.token)
    assert client is not None
    return f"client:{client.client_id}"
