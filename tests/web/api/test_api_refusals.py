"""Each class of bad request gets its status, a stable problem `type`, and a message that says what to do.

Authentication and scope come before the body is looked at; size before anything is parsed.
"""

from __future__ import annotations

from api_factories import INSTRUMENT, MATERIAL, Lab, bare_lab, lot_body  # noqa: F401 - fixture

from service import services as uc
from service.web.errors import PROBLEM_BASE


def _problem(r, status: int, code: str) -> dict:  # type: ignore[no-untyped-def]
    assert r.status_code == status, r.text
    assert r.headers["content-type"].startswith("application/problem+json")
    body = r.json()
    assert body["type"] == PROBLEM_BASE + code and body["status"] == status and body["detail"]
    return body


def test_no_token_is_401_even_with_a_malformed_body(bare_lab: Lab) -> None:
    c = bare_lab.client
    body = _problem(c.post("/api/v1/lots", content=b"{not json", headers={"Content-Type": "application/json"}),
                    401, "not-authenticated")
    assert "Bearer" in c.post("/api/v1/lots", json=lot_body()).headers.get("www-authenticate", "Bearer")
    assert "Authorization: Bearer" in body["detail"]
    _problem(c.get("/api/v1/lots", headers={"Authorization": "Bearer bgt_00000000_" + "x" * 43}),
             401, "not-authenticated")


def test_wrong_scope_is_403_before_the_body_is_validated(bare_lab: Lab) -> None:
    r = bare_lab.client.post("/api/v1/lots", content=b"{not json", headers={
        **bare_lab.auth(bare_lab.read_token), "Content-Type": "application/json"})
    body = _problem(r, 403, "access-denied")
    assert "receive lot" in body["detail"] and "read" in body["detail"]


def test_wrong_content_type_is_415(bare_lab: Lab) -> None:
    r = bare_lab.client.post("/api/v1/lots", content=b"material=X", headers={
        **bare_lab.auth(), "Content-Type": "application/x-www-form-urlencoded"})
    body = _problem(r, 415, "unsupported-media-type")
    assert "application/json" in body["detail"]
    r = bare_lab.client.post("/api/v1/lots/IN-2026-00001/measurements", json={"container": 1},
                             headers=bare_lab.auth())
    assert "multipart/form-data" in _problem(r, 415, "unsupported-media-type")["detail"]


def test_missing_and_wrong_fields_are_422_with_their_paths(bare_lab: Lab) -> None:
    r = bare_lab.client.post("/api/v1/lots", json=lot_body(containers=0, received_on="yesterday", extra=1),
                             headers=bare_lab.auth())
    body = _problem(r, 422, "invalid-input")
    paths = {f["path"] for f in body["errors"]}
    assert {"containers", "received_on", "extra"} <= paths
    r = bare_lab.client.post("/api/v1/lots", json=lot_body(retest_on="2026-01-01"), headers=bare_lab.auth())
    assert "retest_on" in _problem(r, 422, "invalid-input")["detail"]


def test_unknown_lot_is_404(bare_lab: Lab) -> None:
    body = _problem(bare_lab.client.get("/api/v1/lots/IN-1999-99999", headers=bare_lab.auth()), 404, "not-found")
    assert "IN-1999-99999" in body["detail"]
    r = bare_lab.client.post("/api/v1/lots/IN-1999-99999/measurements", headers=bare_lab.auth(),
                             data={"container": "1", "instrument": INSTRUMENT, "operator": "tina.tech"},
                             files={"file": ("s.csv", b"1,2\n", "text/csv")})
    _problem(r, 404, "not-found")


def test_oversize_upload_is_413_by_declared_length_and_by_streaming(db_url: str) -> None:
    from api_factories import make_lab

    lab = make_lab(db_url, max_upload_bytes=64 * 1024, spectra=False)
    code = lab.client.post("/api/v1/lots", json=lot_body(), headers=lab.auth()).json()["code"]
    big = b"9" * (64 * 1024 + 300 * 1024)
    r = lab.client.post(f"/api/v1/lots/{code}/measurements", headers=lab.auth(),
                        data={"container": "1", "instrument": INSTRUMENT, "operator": "tina.tech"},
                        files={"file": ("big.csv", big, "text/csv")})
    body = _problem(r, 413, "payload-too-large")
    assert body["limit_bytes"] == 64 * 1024 and "65,536" in body["detail"]

    def chunks():  # no Content-Length: counted while streaming
        for _ in range(40):
            yield b"x" * 10_000

    r = lab.client.post(f"/api/v1/lots/{code}/measurements", content=chunks(),
                        headers={**lab.auth(), "Content-Type": "multipart/form-data; boundary=zz"})
    _problem(r, 413, "payload-too-large")
    # a file just over the file limit but inside the multipart allowance is refused by the endpoint
    r = lab.client.post(f"/api/v1/lots/{code}/measurements", headers=lab.auth(),
                        data={"container": "1", "instrument": INSTRUMENT, "operator": "tina.tech"},
                        files={"file": ("big.csv", b"9" * (64 * 1024 + 1), "text/csv")})
    _problem(r, 413, "payload-too-large")
    assert uc.get_lot(lab.engine, code).measurements == ()


def test_unknown_operator_is_422_naming_the_field(bare_lab: Lab) -> None:
    code = bare_lab.client.post("/api/v1/lots", json=lot_body(), headers=bare_lab.auth()).json()["code"]
    r = bare_lab.client.post(f"/api/v1/lots/{code}/measurements", headers=bare_lab.auth(),
                             data={"container": "1", "instrument": INSTRUMENT, "operator": "nobody"},
                             files={"file": ("s.csv", b"1,2\n", "text/csv")})
    body = _problem(r, 422, "invalid-input")
    assert body["errors"][0]["path"] == "operator"
    r = bare_lab.client.post(f"/api/v1/lots/{code}/measurements", headers=bare_lab.auth(),
                             data={"container": "1", "instrument": INSTRUMENT, "operator": "quinn.qa"},
                             files={"file": ("s.csv", b"1,2\n", "text/csv")})
    assert "records measurements" in _problem(r, 422, "invalid-input")["detail"]


def test_wrong_container_is_422_naming_the_field(bare_lab: Lab) -> None:
    code = bare_lab.client.post("/api/v1/lots", json=lot_body(containers=2), headers=bare_lab.auth()).json()["code"]
    r = bare_lab.client.post(f"/api/v1/lots/{code}/measurements", headers=bare_lab.auth(),
                             data={"container": "7", "instrument": INSTRUMENT, "operator": "tina.tech"},
                             files={"file": ("s.csv", b"1,2\n", "text/csv")})
    body = _problem(r, 422, "invalid-input")
    assert body["errors"][0]["path"] == "container" and "1 to 2" in body["detail"]


def test_bad_spec_json_is_422_with_field_paths(bare_lab: Lab) -> None:
    r = bare_lab.client.post(f"/api/v1/materials/{MATERIAL}/specifications", headers=bare_lab.auth(),
                             json={"document": {"material": MATERIAL, "range": "everything"}})
    body = _problem(r, 422, "invalid-specification")
    assert all(f["path"].startswith("document") for f in body["errors"])
    assert any(f["path"] == "document.range" or f["path"].startswith("document.range") for f in body["errors"])
    r = bare_lab.client.post("/api/v1/evaluate", headers=bare_lab.auth(),
                             data={"spec": "{\"material\": "},
                             files={"file": ("s.csv", b"1,2\n", "text/csv"), "reference": ("r.csv", b"1,2\n", "text/csv")})
    body = _problem(r, 422, "invalid-input")
    assert body["errors"][0]["path"] == "spec" and "not valid JSON" in body["detail"]


def test_no_token_may_sign_and_there_is_no_approval_route(bare_lab: Lab) -> None:
    paths = bare_lab.client.get("/api/v1/openapi.json").json()["paths"]
    assert not [p for p in paths if "approv" in p or "sign" in p or "dispos" in p]
