"""Use cases end to end on SQLite and PostgreSQL: receive lot -> plan -> measurements -> evaluation ->
review -> disposition, with the real readers and the real evaluator.

Spectra: real ATR spectra of toluene, heptanes and isopropanol (PlotFTIR, GPL-3, read from
../shared/data) and a SYNTHETIC polystyrene film for the instrument check.
"""

from __future__ import annotations

import json
from datetime import date, timedelta

import pytest

from service import services as uc
from service.errors import Conflict, Forbidden, InvalidInput, NotFound
from service.release import LotState, StepRefused
from service.release.digests import sha256_hex
import records_spectra as sp
from records_factories import make_material, make_user, receive


def _lot(lab, containers: int = 2):  # type: ignore[no-untyped-def]
    return receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents",
                   containers=containers)


def _measure(lab, lot, container: int, column: str, *, actor=None, seed: int = 0):  # type: ignore[no-untyped-def]
    return uc.record_measurement(lab.engine, actor or lab.tech, lot_code=lot.code, container=container,
                                 instrument_code=lab.instrument, data=sp.real_csv(column, noise=0.002, seed=seed),
                                 file_name=f"{column}-{container}.csv")


def test_passing_lot_is_released_only_by_qa(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=2)
    assert lot.state == "quarantine" and lot.plan["to_test"] == 2 and lot.code.startswith("IN-")
    m1 = _measure(lab, lot, 1, "toluene", seed=1)
    assert m1.status == "accepted" and m1.verdict == "pass"
    assert uc.get_lot(lab.engine, lot.code).state == "testing"
    upload = sp.real_csv("toluene", noise=0.002, seed=2)
    m2 = uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=2, instrument_code="FTIR-1",
                               data=upload, file_name="t2.csv")
    assert m2.sha256 == sha256_hex(upload) and m2.size == len(upload)
    _view, stored = uc.measurement_file(lab.engine, m2.id)
    assert stored == upload  # original bytes kept unchanged
    state = uc.get_lot(lab.engine, lot.code)
    assert state.state == "awaiting_disposition"  # a computed pass never releases by itself
    ev = state.measurements[1].evaluation
    assert ev is not None and ev.spec_version == 1 and ev.software_version and ev.document["verdict"] == "pass"
    with pytest.raises(Forbidden):  # the one who measured cannot dispose
        uc.dispose_lot(lab.engine, lab.tech, lot_code=lot.code, outcome="released")
    released = uc.dispose_lot(lab.engine, lab.qa, lot_code=lot.code, outcome="released", reason="conforms")
    assert released.state == "released" and released.decision["outcome"] == "released"
    sig = released.signatures[0]
    assert sig.meaning == "released" and sig.printed_name == "Quinn QA" and len(sig.digest) == 64
    with pytest.raises(Conflict):
        uc.dispose_lot(lab.engine, lab.qa, lot_code=lot.code, outcome="rejected", reason="changed my mind")
    with pytest.raises(Conflict, match="closed"):  # a decided lot takes nothing more
        _measure(lab, lot, 1, "toluene")
    report = uc.verify_audit(lab.engine)
    assert report.ok, report.problems
    assert report.signatures >= 5  # 3 references, 1 spec, 1 release


def test_failed_lot_review_invalidate_retest_then_release(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=2)
    bad = _measure(lab, lot, 1, "heptanes")  # a mix-up: heptanes delivered as toluene
    assert bad.verdict == "fail"
    crit = {c["kind"]: c["outcome"] for c in bad.evaluation.document["criteria"]}
    assert crit["fingerprint"] == "fail" and crit["specificity"] == "fail"
    with pytest.raises(uc.MeasurementRefused, match="already has a result"):  # no testing into compliance
        _measure(lab, lot, 1, "toluene")
    _measure(lab, lot, 2, "toluene")
    assert uc.get_lot(lab.engine, lot.code).state == "awaiting_review"
    with pytest.raises(StepRefused):
        uc.dispose_lot(lab.engine, lab.qa, lot_code=lot.code, outcome="released")
    with pytest.raises(Forbidden):
        uc.invalidate_measurement(lab.engine, lab.tech, measurement_id=bad.id, cause="my mistake")
    with pytest.raises(InvalidInput):
        uc.invalidate_measurement(lab.engine, lab.reviewer, measurement_id=bad.id, cause="  ")
    inv = uc.invalidate_measurement(lab.engine, lab.reviewer, measurement_id=bad.id,
                                    cause="wrong container sampled: label mix-up at the sampling booth")
    assert inv.invalidated and inv.signatures[0].meaning == "invalidated"
    assert uc.get_lot(lab.engine, lot.code).state == "testing"
    retest = _measure(lab, lot, 1, "toluene", seed=5)
    assert retest.retest_of_id == bad.id and retest.verdict == "pass"
    lot_now = uc.get_lot(lab.engine, lot.code)
    assert lot_now.state == "awaiting_disposition"
    assert [m.id for m in lot_now.measurements][0] == bad.id and lot_now.measurements[0].invalidated  # stays visible
    uc.dispose_lot(lab.engine, lab.qa, lot_code=lot.code, outcome="released")
    assert uc.verify_audit(lab.engine).ok


def test_failed_lot_rejected_at_review(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=1)
    _measure(lab, lot, 1, "heptanes")
    with pytest.raises(InvalidInput):
        uc.reject_after_review(lab.engine, lab.reviewer, lot_code=lot.code, reason="")
    done = uc.reject_after_review(lab.engine, lab.reviewer, lot_code=lot.code, reason="identity not confirmed")
    assert done.state == "rejected" and done.decision == {**done.decision, "stage": "review", "outcome": "rejected"}
    assert done.signatures[0].meaning == "rejected" and done.signatures[0].reason == "identity not confirmed"
    record = json.loads(uc.export_lot(lab.engine, lot.code))
    actions = [e["action"] for e in record["audit_events"]]
    assert actions[0] == "lot.received" and "lot.rejected" in actions and "signature.created" in actions
    csv_text = uc.export_lot(lab.engine, lot.code, fmt="csv")
    assert "Rita Review" in csv_text and "rejected" in csv_text and "advice to the quality unit" in csv_text
    # and the same through the command line
    import os
    import subprocess
    import sys
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    out = subprocess.run([sys.executable, "-m", "service", "audit", "export", "--lot", lot.code, "--format", "csv"],
                         capture_output=True, text=True, cwd=root, timeout=120,
                         env=dict(os.environ, BANDGATE_DATABASE_URL=lab.url, PYTHONPATH=str(root)))
    assert out.returncode == 0, out.stderr
    assert out.stdout.splitlines()[0] == "section,when_utc,who,what,detail" and lot.code in out.stdout
    assert "Tina Tech" in out.stdout.splitlines()[1]  # who received the lot, by printed name
    missing = subprocess.run([sys.executable, "-m", "service", "audit", "export", "--lot", "IN-1900-00001"],
                             capture_output=True, text=True, cwd=root, timeout=120,
                             env=dict(os.environ, BANDGATE_DATABASE_URL=lab.url, PYTHONPATH=str(root)))
    assert missing.returncode == 2 and "no lot" in missing.stderr and "Traceback" not in missing.stderr


def test_unreadable_upload_is_kept_with_the_reason(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=1)
    junk = b"\x89PNG\r\n\x1a\n not a spectrum at all"
    with pytest.raises(uc.UploadUnreadable) as info:
        uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code="FTIR-1",
                              data=junk, file_name="photo.png")
    kept = info.value.measurement
    assert kept.status == "unreadable" and kept.reason == info.value.message and kept.sha256 == sha256_hex(junk)
    assert uc.measurement_file(lab.engine, kept.id)[1] == junk
    assert uc.get_lot(lab.engine, lot.code).state == "quarantine"  # an unreadable file is no result
    ok = _measure(lab, lot, 1, "toluene")
    assert ok.verdict == "pass"


def test_invalid_verdict_is_recorded_and_the_container_stays_open(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=1)
    sat = _measure(lab, lot, 1, "isopropanol")  # saturated bands (absorbance 1.99 > 1.5): cannot be judged
    assert sat.status == "accepted" and sat.verdict == "invalid"
    assert uc.get_lot(lab.engine, lot.code).state == "testing"
    assert _measure(lab, lot, 1, "toluene").verdict == "pass"


def test_unqualified_instrument_is_refused_with_what_to_do(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=1)
    uc.register_instrument(lab.engine, lab.qa, code="FTIR-2", kind="FT-IR")
    with pytest.raises(uc.MeasurementRefused, match="run the polystyrene check on FTIR-2 and upload it, then measure again"):
        uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code="FTIR-2",
                              data=sp.real_csv("toluene"), file_name="t.csv")
    # with a zero-length period, even a fresh check has lapsed
    with pytest.raises(uc.MeasurementRefused, match="older than"):
        uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code="FTIR-1",
                              data=sp.real_csv("toluene"), file_name="t.csv", check_days=1e-9)
    inst = uc.get_instrument(lab.engine, "FTIR-1")
    assert inst.qualified and inst.qualified_until is not None


def test_wrong_lot_container_or_instrument_is_not_found(lab) -> None:  # type: ignore[no-untyped-def]
    lot = _lot(lab, containers=2)
    for kwargs, what in (({"lot_code": "IN-1999-00001"}, "no lot"), ({"container": 3}, "container 3"),
                         ({"instrument_code": "NOPE"}, "no instrument")):
        args = dict(lot_code=lot.code, container=1, instrument_code="FTIR-1", data=b"x", file_name="x")
        args.update(kwargs)
        with pytest.raises(NotFound, match=what):
            uc.record_measurement(lab.engine, lab.tech, **args)


def test_reduced_plan_only_with_an_approved_supplier_flag(lab) -> None:  # type: ignore[no-untyped-def]
    uc.create_supplier(lab.engine, lab.qa, name="Southwind")
    uc.approve_supplier(lab.engine, lab.qa, material_code="TOL-01", supplier_name="Southwind", reduced_plan=True)
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Southwind", containers=16)
    assert lot.plan["kind"] == "n_plan" and lot.plan["to_test"] == 5  # 1 + sqrt 16 = 5 (WHO TRS 929 Annex 4)
    unselected = next(c.number for c in lot.containers if not c.selected)
    with pytest.raises(uc.MeasurementRefused, match="not in the sampling plan"):
        _measure(lab, lot, unselected, "toluene")
    with pytest.raises(InvalidInput):  # a change of the flag needs a reason
        uc.approve_supplier(lab.engine, lab.qa, material_code="TOL-01", supplier_name="Southwind", reduced_plan=False)
    uc.create_supplier(lab.engine, lab.qa, name="Unvetted Ltd")
    with pytest.raises(Conflict, match="not approved"):
        receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Unvetted Ltd")


def test_spec_versions_draft_approved_superseded(lab) -> None:  # type: ignore[no-untyped-def]
    doc = dict(sp.TOLUENE_SPEC, fingerprint={"metric": "pearson", "min_score": 0.97})
    v2 = uc.create_spec_draft(lab.engine, lab.qa, material_code="TOL-01", document=doc)
    assert v2.version == 2 and v2.status == "draft" and v2.document["version"] == 2
    assert uc.effective_spec(lab.engine, "TOL-01").version == 1  # a draft is not used
    uc.approve_spec_version(lab.engine, lab.qa, spec_version_id=v2.id)
    versions = {v.version: v.status for v in uc.spec_versions(lab.engine, "TOL-01")}
    assert versions == {1: "superseded", 2: "approved"}
    with pytest.raises(Conflict):
        uc.approve_spec_version(lab.engine, lab.qa, spec_version_id=v2.id)
    with pytest.raises(InvalidInput):
        uc.create_spec_draft(lab.engine, lab.qa, material_code="TOL-01", document={"material": "TOL-01"})
    lot = _lot(lab, containers=1)
    assert _measure(lab, lot, 1, "toluene").evaluation.spec_version == 2


def _drop_triggers(engine, table: str) -> None:  # type: ignore[no-untyped-def]
    from sqlalchemy import text

    with engine.begin() as conn:
        if engine.dialect.name == "sqlite":
            conn.execute(text(f"DROP TRIGGER {table}_no_update"))
        else:
            conn.execute(text(f"ALTER TABLE {table} DISABLE TRIGGER USER"))


def test_changed_file_or_evaluation_after_signing_is_caught(lab) -> None:  # type: ignore[no-untyped-def]
    from sqlalchemy import text

    lot = _lot(lab, containers=1)
    m = _measure(lab, lot, 1, "toluene")
    uc.dispose_lot(lab.engine, lab.qa, lot_code=lot.code, outcome="released")
    assert uc.verify_audit(lab.engine).ok
    _drop_triggers(lab.engine, "evaluations")
    with lab.engine.begin() as conn:  # someone turns a result around behind the database's back
        conn.execute(text("UPDATE evaluations SET verdict = 'fail' WHERE measurement_id = :m"), {"m": m.id})
    report = uc.verify_audit(lab.engine)
    assert not report.ok and f"lot {lot.id} has changed since it was signed" in report.first_problem
    _drop_triggers(lab.engine, "stored_files")
    with lab.engine.begin() as conn:
        conn.execute(text("UPDATE stored_files SET content = :c WHERE sha256 = :s"), {"c": b"swapped", "s": m.sha256})
    problems = uc.verify_audit(lab.engine).problems
    assert any("no longer match the SHA-256" in p for p in problems)


def test_a_lot_state_changed_outside_bandgate_is_caught(lab) -> None:  # type: ignore[no-untyped-def]
    from sqlalchemy import text

    lot = _lot(lab, containers=1)
    _measure(lab, lot, 1, "heptanes")
    assert uc.get_lot(lab.engine, lot.code).state == "awaiting_review" and uc.verify_audit(lab.engine).ok
    with lab.engine.begin() as conn:  # 'lots' is not append-only, but its state is audited
        conn.execute(text("UPDATE lots SET state = 'released' WHERE code = :c"), {"c": lot.code})
    report = uc.verify_audit(lab.engine)
    assert not report.ok and f"lot {lot.code}: its state 'released'" in report.first_problem
