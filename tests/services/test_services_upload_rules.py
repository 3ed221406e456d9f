"""The upload's refusal rules that rest on the approved basis and the named operator, on SQLite and
PostgreSQL, with the real readers and evaluator.

An upload the lot cannot take is still kept (refused, with its bytes and SHA-256); one that names
nobody who may record it is refused before anything is stored. Spectra: real ATR spectra of toluene
(PlotFTIR, GPL-3, read from ../shared/data).
"""

from __future__ import annotations

import pytest

from service import services as uc
from service.errors import InvalidInput
from service.release.digests import sha256_hex
from service.services import measurements
import records_spectra as sp
from records_factories import make_material, make_user, receive


def _upload(lab, lot, container: int = 1, *, actor=None, seed: int = 0):  # type: ignore[no-untyped-def]
    return uc.record_measurement(lab.engine, actor or lab.tech, lot_code=lot.code, container=container,
                                 instrument_code=lab.instrument, data=sp.real_csv("toluene", noise=0.002, seed=seed),
                                 file_name=f"toluene-{container}.csv")


def _kept_refusal(lab, exc: uc.MeasurementRefused, *, seed: int = 0) -> None:  # type: ignore[no-untyped-def]
    view, stored = uc.measurement_file(lab.engine, exc.measurement.id)
    assert view.status == "refused" and view.evaluation is None
    assert stored == sp.real_csv("toluene", noise=0.002, seed=seed) and view.sha256 == sha256_hex(stored)
    assert uc.verify_audit(lab.engine).ok


def test_a_material_without_an_approved_specification_refuses_and_keeps_the_upload(lab) -> None:  # type: ignore[no-untyped-def]
    make_material(lab.engine, lab.qa, code="EXC-104", name="Lactose monohydrate")
    lot = receive(lab.engine, lab.tech, containers=1)
    with pytest.raises(uc.MeasurementRefused, match="no approved specification") as refused:
        _upload(lab, lot)
    _kept_refusal(lab, refused.value)
    assert uc.get_lot(lab.engine, lot.code).state == "quarantine"  # a refusal moves nothing on


def test_a_material_without_an_approved_reference_refuses_and_keeps_the_upload(lab) -> None:  # type: ignore[no-untyped-def]
    make_material(lab.engine, lab.qa, code="TOL-02", name="Toluene, second grade", supplier="Northwind Solvents")
    spec = uc.create_spec_draft(lab.engine, lab.qa, material_code="TOL-02",
                                document={**sp.TOLUENE_SPEC, "material": "TOL-02"})
    uc.approve_spec_version(lab.engine, lab.qa, spec_version_id=spec.id, reason="first version")
    lot = receive(lab.engine, lab.tech, material_code="TOL-02", supplier_name="Northwind Solvents", containers=1)
    with pytest.raises(uc.MeasurementRefused, match="no approved reference spectrum") as refused:
        _upload(lab, lot)
    _kept_refusal(lab, refused.value)


def test_a_specification_approved_while_the_upload_was_evaluated_refuses_it(lab, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    """The evaluation runs before the write lock; the write transaction re-checks the basis under it."""
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=2)
    real_evaluate = measurements._evaluate

    def evaluate_then_a_new_version_is_approved(*args, **kwargs):  # type: ignore[no-untyped-def]
        result = real_evaluate(*args, **kwargs)
        draft = uc.create_spec_draft(lab.engine, lab.qa, material_code="TOL-01",
                                     document={**sp.TOLUENE_SPEC, "version": 2})
        uc.approve_spec_version(lab.engine, lab.qa, spec_version_id=draft.id, reason="tighter fingerprint")
        return result

    monkeypatch.setattr(measurements, "_evaluate", evaluate_then_a_new_version_is_approved)
    with pytest.raises(uc.MeasurementRefused, match="changed during the upload") as refused:
        _upload(lab, lot)
    _kept_refusal(lab, refused.value)
    monkeypatch.setattr(measurements, "_evaluate", real_evaluate)
    again = _upload(lab, lot, 2, seed=3)  # evaluated against the version now approved
    assert again.verdict == "pass" and again.evaluation is not None and again.evaluation.spec_version == 2


def test_the_named_operator_is_checked_before_anything_is_stored(lab) -> None:  # type: ignore[no-untyped-def]
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=1)
    make_user(lab.engine, "q.only", roles=("quality",), printed_name="Quinta Only")
    data = sp.real_csv("toluene", noise=0.002)
    for name, message in (("nobody", "no active user 'nobody'"), ("q.only", "has no role that records")):
        with pytest.raises(InvalidInput, match=message) as bad:
            uc.record_measurement_with_state(lab.engine, uc.NamedOperator(name), lot_code=lot.code, container=1,
                                             instrument_code=lab.instrument, data=data, file_name="t.csv")
        assert [f.path for f in bad.value.fields] == ["operator"]
    assert uc.get_lot(lab.engine, lot.code).measurements == ()
    view, state = uc.record_measurement_with_state(lab.engine, uc.NamedOperator(" Tina.Tech "), lot_code=lot.code,
                                                   container=1, instrument_code=lab.instrument, data=data,
                                                   file_name="t.csv")
    assert view.operator_id == lab.tech.user_id and view.verdict == "pass" and state == "awaiting_disposition"


def test_the_upload_answer_is_the_record_as_read_back(lab) -> None:  # type: ignore[no-untyped-def]
    """The view an upload answers with is built from what it inserted, not read back; it must equal
    what a later read of the stored rows gives, the evaluation document included."""
    from service.release.digests import canonical_json

    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=2)
    answered = _upload(lab, lot, 1, seed=3)
    read_back = uc.get_measurement(lab.engine, answered.id)
    assert answered.evaluation is not None and answered.verdict == "pass"
    assert canonical_json(answered.as_dict()) == canonical_json(read_back.as_dict())
