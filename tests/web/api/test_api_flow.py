"""The whole identity test of a lot over HTTP, on SQLite and PostgreSQL: receive the lot, upload a
spectrum per container, read verdicts and the lot's state; unreadable and refused uploads are kept.

Spectra are synthetic (seeded Gaussian bands at group-frequency positions from the UCLA WebSpectra /
UMass OWL IR tables, as quoted in ../shared/domain.md): an ester passes the ester specification
(carbonyl 1750-1735 cm-1 required), an alcohol fails it.
"""

from __future__ import annotations

import hashlib

from api_factories import ALCOHOL_BANDS, ESTER_BANDS, MATERIAL, Lab, lab, lot_body, spectrum_csv, upload  # noqa: F401

from service import services as uc
from service.web.errors import PROBLEM_BASE


def _receive(lab: Lab, **changes: object) -> dict:  # type: ignore[type-arg]
    r = lab.client.post("/api/v1/lots", json=lot_body(**changes), headers=lab.auth())
    assert r.status_code == 201, r.text
    return r.json()


def test_lot_to_measurements_to_verdicts_to_state(lab: Lab) -> None:
    lot = _receive(lab, containers=2)
    code = lot["code"]
    assert lot["state"] == "quarantine" and lot["plan"]["selected"] == [1, 2]
    assert [c["outcome"] for c in lot["containers"]] == ["untested", "untested"]
    assert "not a release" in lot["caution"]

    data = spectrum_csv(ESTER_BANDS, seed=11)
    r = upload(lab, code, container=1, data=data)
    assert r.status_code == 201, r.text
    m = r.json()
    assert m["sha256"] == hashlib.sha256(data).hexdigest() and m["size"] == len(data)
    assert m["status"] == "accepted" and m["verdict"] == "pass" and m["evaluation"]["verdict"] == "pass"
    assert m["evaluation"]["criteria"] and all("outcome" in c for c in m["evaluation"]["criteria"])
    assert m["lot_state"] == "testing" and r.headers["location"] == f"/api/v1/measurements/{m['id']}"

    r = upload(lab, code, container=2, data=spectrum_csv(ESTER_BANDS, seed=12))
    assert r.status_code == 201 and r.json()["lot_state"] == "awaiting_disposition"

    got = lab.client.get(f"/api/v1/lots/{code}", headers=lab.auth(lab.read_token)).json()
    assert got["state"] == "awaiting_disposition" and got["state_label"] == "conforms, awaiting QA disposition"
    assert [c["outcome"] for c in got["containers"]] == ["passed", "passed"]
    assert [x["verdict"] for x in got["measurements"]] == ["pass", "pass"]
    assert got["signatures"] == []  # a computed pass releases nothing: QA signs in the pages

    listed = lab.client.get("/api/v1/lots", params={"state": "awaiting_disposition", "material": MATERIAL},
                            headers=lab.auth(lab.read_token)).json()
    assert code in [x["code"] for x in listed["items"]] and listed["total"] >= 1

    one = lab.client.get(f"/api/v1/measurements/{m['id']}", headers=lab.auth(lab.read_token)).json()
    assert one["id"] == m["id"] and one["evaluation"]["document"]["verdict"] == "pass"

    events = lab.client.get("/api/v1/audit/events", params={"record": f"lot:{code}"},
                            headers=lab.auth(lab.read_token)).json()
    actions = [e["action"] for e in events["items"]]
    assert actions[0] == "lot.received" and "lot.state_changed" in actions
    verify = lab.client.get("/api/v1/audit/verify", headers=lab.auth(lab.read_token)).json()
    assert verify["ok"] is True and verify["first_problem"] is None and verify["events"] > 0


def test_a_wrong_material_fails_and_the_lot_awaits_review(lab: Lab) -> None:
    code = _receive(lab, containers=1)["code"]
    r = upload(lab, code, container=1, data=spectrum_csv(ALCOHOL_BANDS, seed=3))
    assert r.status_code == 201 and r.json()["verdict"] == "fail"
    failed = [c for c in r.json()["evaluation"]["criteria"] if c["outcome"] == "fail"]
    assert failed  # the missing carbonyl (or the fingerprint) names itself
    assert r.json()["lot_state"] == "awaiting_review"


def test_an_unreadable_file_is_kept_as_a_rejected_measurement_and_answered_422(lab: Lab) -> None:
    code = _receive(lab, containers=1)["code"]
    junk = b"\x89PNG\r\n\x1a\n not a spectrum at all"
    r = upload(lab, code, container=1, data=junk, name="photo.png")
    assert r.status_code == 422 and r.headers["content-type"].startswith("application/problem+json")
    body = r.json()
    assert body["type"] == PROBLEM_BASE + "unreadable-spectrum" and body["detail"]
    kept = body["measurement"]
    assert kept["status"] == "unreadable" and kept["reason"] == body["detail"]
    assert kept["sha256"] == hashlib.sha256(junk).hexdigest()
    got = uc.get_lot(lab.engine, code)
    assert [x.status for x in got.measurements] == ["unreadable"] and got.state == "quarantine"
    # the container can still be measured with a good file
    assert upload(lab, code, container=1, data=spectrum_csv(ESTER_BANDS, seed=5)).status_code == 201


def test_an_upload_the_lot_cannot_take_is_kept_as_refused_and_answered_409(lab: Lab) -> None:
    code = _receive(lab, containers=2)["code"]
    assert upload(lab, code, container=1, data=spectrum_csv(ESTER_BANDS, seed=6)).status_code == 201
    r = upload(lab, code, container=1, data=spectrum_csv(ESTER_BANDS, seed=7))
    assert r.status_code == 409 and r.json()["type"] == PROBLEM_BASE + "measurement-refused"
    assert r.json()["measurement"]["status"] == "refused" and "already has a result" in r.json()["detail"]
    assert [m.status for m in uc.get_lot(lab.engine, code).measurements] == ["accepted", "refused"]


def test_a_replayed_upload_returns_the_first_answer_even_with_a_new_boundary(lab: Lab) -> None:
    code = _receive(lab, containers=2)["code"]
    data = spectrum_csv(ESTER_BANDS, seed=8)
    first = upload(lab, code, container=1, data=data, headers={"Idempotency-Key": "up-1"})
    again = upload(lab, code, container=1, data=data, headers={"Idempotency-Key": "up-1"})
    assert first.status_code == again.status_code == 201
    assert again.headers["Idempotent-Replayed"] == "true" and again.json() == first.json()
    assert len(uc.get_lot(lab.engine, code).measurements) == 1
    other = upload(lab, code, container=2, data=data, headers={"Idempotency-Key": "up-1"})
    assert other.status_code == 422 and other.json()["type"] == PROBLEM_BASE + "idempotency-key-reused"
    # an unreadable upload is recorded too, so its 422 is replayed, not recorded twice
    bad1 = upload(lab, code, container=2, data=b"garbage", headers={"Idempotency-Key": "up-2"})
    bad2 = upload(lab, code, container=2, data=b"garbage", headers={"Idempotency-Key": "up-2"})
    assert bad1.status_code == bad2.status_code == 422 and bad2.json() == bad1.json()
    assert len(uc.get_lot(lab.engine, code).measurements) == 2


def test_dry_run_and_library_search_record_nothing(lab: Lab) -> None:
    import json

    from api_factories import spec_document

    before = uc.verify_audit(lab.engine).events
    sample = spectrum_csv(ESTER_BANDS, seed=9)
    r = lab.client.post("/api/v1/evaluate", headers=lab.auth(), data={"material": MATERIAL},
                        files={"file": ("s.csv", sample, "text/csv")})
    assert r.status_code == 200, r.text
    assert r.json()["verdict"] == "pass" and r.json()["recorded"] is False and "version" in r.json()["specification"]
    r = lab.client.post("/api/v1/evaluate", headers=lab.auth(), data={"spec": json.dumps(spec_document())},
                        files={"file": ("s.csv", spectrum_csv(ALCOHOL_BANDS, seed=4), "text/csv"),
                               "reference": ("r.csv", spectrum_csv(ESTER_BANDS, seed=2), "text/csv")})
    assert r.status_code == 200 and r.json()["verdict"] == "fail"
    r = lab.client.post("/api/v1/library/search", headers=lab.auth(), files={"file": ("s.csv", sample, "text/csv")})
    assert r.status_code == 200, r.text
    assert r.json()["references"] == 1 and r.json()["matches"][0]["material"] == MATERIAL
    assert r.json()["matches"][0]["score"] > 0.95
    assert uc.verify_audit(lab.engine).events == before


def test_catalogue_create_and_read(lab: Lab) -> None:
    from api_factories import POLYSTYRENE_BANDS, spec_document

    c, auth = lab.client, lab.auth()
    r = c.post("/api/v1/materials", json={"code": "SYN-ALC", "name": "Alcohol (synthetic)"}, headers=auth)
    assert r.status_code == 201 and r.headers["location"] == "/api/v1/materials/SYN-ALC"
    assert c.get("/api/v1/materials/SYN-ALC", headers=auth).json()["name"] == "Alcohol (synthetic)"
    assert c.post("/api/v1/materials", json={"code": "SYN-ALC", "name": "again"}, headers=auth).status_code == 409
    r = c.post("/api/v1/materials/SYN-ALC/specifications", headers=auth,
               json={"document": spec_document(material="SYN-ALC", required_bands=[])})
    assert r.status_code == 201 and r.json()["status"] == "draft", r.text
    spec_id = r.json()["id"]
    assert c.get(f"/api/v1/specifications/{spec_id}", headers=auth).json()["version"] == 1
    assert [s["id"] for s in c.get("/api/v1/materials/SYN-ALC/specifications", headers=auth).json()] == [spec_id]
    r = c.post("/api/v1/materials/SYN-ALC/references", headers=auth, data={"preparation": "atr-znse"},
               files={"file": ("alc-synthetic.csv", spectrum_csv(ALCOHOL_BANDS), "text/csv")})
    assert r.status_code == 201 and r.json()["status"] == "draft", r.text
    assert c.get(f"/api/v1/references/{r.json()['id']}", headers=auth).json()["material"] == "SYN-ALC"
    r = c.post("/api/v1/instruments", json={"code": "FTIR-09", "kind": "FT-IR", "location": "QC"}, headers=auth)
    assert r.status_code == 201 and r.json()["qualified"] is False
    r = c.post("/api/v1/instruments/FTIR-09/checks", headers=auth,
               files={"file": ("ps-synthetic.csv", spectrum_csv(POLYSTYRENE_BANDS, points=6801, noise=0.0002),
                               "text/csv")})
    assert r.status_code == 201 and r.json()["passed"] is True, r.text
    assert c.get("/api/v1/instruments/FTIR-09", headers=auth).json()["qualified"] is True
    assert len(c.get("/api/v1/instruments/FTIR-09/checks", headers=auth).json()) == 1
    # a read-only token cannot create
    r = c.post("/api/v1/materials", json={"code": "SYN-X", "name": "x"}, headers=lab.auth(lab.read_token))
    assert r.status_code == 403


def test_a_large_high_resolution_file_is_read_and_evaluated_off_the_event_loop(lab: Lab) -> None:
    """A file above the in-place size (service.web.work_placement) takes the thread-pool path; the
    answer is the same kind as for a small file."""
    from service.web.work_placement import IN_PLACE_MAX_BYTES

    data = spectrum_csv(ESTER_BANDS, seed=13, points=34_001)  # 0.1 cm-1 spacing, about 720 KB
    assert len(data) > IN_PLACE_MAX_BYTES
    code = _receive(lab, containers=1)["code"]
    r = upload(lab, code, container=1, data=data)
    assert r.status_code == 201, r.text
    m = r.json()
    assert m["sha256"] == hashlib.sha256(data).hexdigest() and m["size"] == len(data)
    assert m["verdict"] == "pass" and m["lot_state"] == "awaiting_disposition"
