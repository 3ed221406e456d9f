"""Record a measurement: keep the original bytes, evaluate against the approved spec, move the lot on.

Every upload that names an existing lot, container and instrument is kept with its SHA-256,
size and original file name (metadata only), whatever becomes of it:

* ``accepted``: read and evaluated; the full Evaluation JSON, the spec version, the reference and
  the software version are stored with it;
* ``unreadable``: the reader refused the file; the reason is its message;
* ``refused``: the upload was not allowed (lot awaiting a decision, container not in the plan or already
  holding a result, instrument not qualified, no approved spec or reference).

The record is committed first; then an unreadable upload raises :class:`UploadUnreadable`
(UnusableInput) and a refused one :class:`MeasurementRefused` (Conflict), both carrying the
stored measurement, so callers answer with an error and the evidence is still kept.

An upload naming an unknown lot, container or instrument, or a lot that is already released or
rejected, is refused without being stored (there is no open record to attach it to; a decided
lot's signed content must not change).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sqlalchemy.engine import Connection, Engine
from sqlmodel import Session

from service import __version__
from service.errors import BandgateError, Conflict, FieldProblem, InvalidInput, NotFound, UnusableInput
from service.release.actor import Actor
from service.release.digests import canonical_json, sha256_hex
from service.release.permissions import Action, person_may
from service.release.lot_states import (
    ContainerOutcome, LotState, LotStep, container_outcome, next_state, outcome_from_counts,
)
from service.release.qualification import Standing
from service.store import repositories as repo
from service.store import upload_records as rows
from service.store.tables import Lot, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services import evaluator
from service.services.instruments import DEFAULT_CHECK_DAYS, instrument_standing
from service.services.lots import evidence, measurement_view
from service.services.views import MeasurementView

MAX_FILE_NAME = 255


class UploadUnreadable(UnusableInput):
    """The file was kept as an unreadable measurement; the message is the reader's."""

    code = "unreadable-spectrum"
    title = "The uploaded spectrum cannot be read"

    def __init__(self, message: str, *, measurement: MeasurementView) -> None:
        super().__init__(message)
        self.measurement = measurement


class MeasurementRefused(Conflict):
    """The file was kept as a refused measurement; the message says why and what to do."""

    code = "measurement-refused"
    title = "Measurement not accepted"

    def __init__(self, message: str, *, measurement: MeasurementView) -> None:
        super().__init__(message)
        self.measurement = measurement


def _state_changed(target: Session | Connection, actor: Actor, lot_id: int | None, old: str, new: str,
                   step: LotStep, reason: str) -> None:
    sh.audit(target, actor, "lot.state_changed", "lot", lot_id, old={"state": old},
             new={"state": new, "step": step.value}, reason=reason or step.value.replace("_", " "))


def set_state(session: Session, actor: Actor, lot: Lot, step: LotStep, *, reason: str = "") -> None:
    """Take one step of the lot state machine, with its audit event."""
    old = lot.state
    lot.state = next_state(LotState(old), step).value
    lot.state_changed_at = utc_now()
    session.add(lot)
    _state_changed(session, actor, lot.id, old, lot.state, step, reason)


def settle_lot(session: Session, actor: Actor, lot: Lot) -> None:
    """Move a lot in testing on once every sampled container has a result."""
    if lot.state != LotState.testing.value:
        return
    session.flush()
    step = _settling_step(session.connection(), lot.id)  # type: ignore[arg-type]
    if step is not None:
        set_state(session, actor, lot, step)


def _settling_step(conn: Connection, lot_id: int) -> LotStep | None:
    sampled, with_result, failed = rows.lot_progress(conn, lot_id)
    return outcome_from_counts(sampled=sampled, with_result=with_result, failed=failed)


def _step_lot(conn: Connection, actor: Actor, lot_id: int, old: str, step: LotStep) -> str:
    """`set_state` on the upload path's plain rows: a Core UPDATE and the same audit event."""
    new = next_state(LotState(old), step).value
    rows.set_lot_state(conn, lot_id, new, utc_now())
    _state_changed(conn, actor, lot_id, old, new, step, "")
    return new


def _target(conn: Connection, *, lot_code: str, container: int, instrument_code: str) -> rows.UploadTarget:
    """The lot, container and instrument an upload names; unknown names and closed lots are refused."""
    t = rows.upload_target(conn, lot_code=lot_code, container=container, instrument_code=instrument_code)
    if t is None:
        raise sh.no_lot(lot_code)
    lot = t.lot
    if LotState(lot.state).is_final:
        raise Conflict(f"lot {lot.code} is closed ({LotState(lot.state).label}); nothing more can be "
                       "recorded against it, and this upload was not stored")
    if t.container is None:
        raise NotFound(f"lot {lot.code} has containers 1 to {lot.containers_received}; there is no "
                       f"container {container}", fields=[FieldProblem("container", "pick a listed container")])
    if t.instrument is None:
        raise sh.no_instrument(instrument_code)
    return t


def _current_verdicts(history: list[rows.HistoryRow]) -> list[str]:
    """Verdicts of the container's current (accepted, evaluated, not invalidated) measurements."""
    return [h.verdict for h in history if h.status == "accepted" and not h.invalidated and h.verdict is not None]


def _refusal(lot: rows.LotRow, container: rows.ContainerRow, history: list[rows.HistoryRow],
             instrument: Standing) -> str | None:
    if not LotState(lot.state).accepts_measurements:
        return (f"lot {lot.code} is '{LotState(lot.state).label}' and takes no more measurements"
                + ("; a reviewer must first invalidate the failing measurement" if lot.state == "awaiting_review" else ""))
    if not container.selected:
        return (f"container {container.number} is not in the sampling plan of lot {lot.code}; "
                "measure one of the containers the plan selected")
    outcome = container_outcome(_current_verdicts(history))
    if outcome is not ContainerOutcome.untested:
        return (f"container {container.number} already has a result ({outcome.value}); a retest needs a reviewer to "
                "invalidate that measurement with an assignable cause first")
    if not instrument.qualified:
        return instrument.text
    return None


def _retest_of(history: list[rows.HistoryRow]) -> int | None:
    """The invalidated measurement of this container that a new upload retests, if any."""
    retested = {h.retest_of_id for h in history if h.retest_of_id is not None and h.status == "accepted"}
    open_ = [h.id for h in history if h.invalidated and h.id not in retested]
    return max(open_) if open_ else None


@dataclass(frozen=True)
class NamedOperator:
    """An operator named by username (a lab system's upload), checked inside the use case's transaction:
    an active person whose role records measurements, or the upload is refused (field ``operator``)."""

    username: str


def _checked_operator(username: str, actor: Actor | None) -> Actor:
    """``actor`` (the active user found under ``username``, or None) if they may be named as operator."""
    if actor is None:
        raise InvalidInput(
            f"no active user {username!r} to name as operator; give the username of the person who measured",
            fields=[FieldProblem("operator", "username of an active person")],
        )
    if not person_may(actor.roles, Action.record_measurement):
        raise InvalidInput(
            f"{actor.printed_name} ({actor.username}) has no role that records measurements; "
            "name the technician who measured",
            fields=[FieldProblem("operator", "a person whose role records measurements")],
        )
    return actor


def _operator(conn: Connection, operator: Actor | NamedOperator) -> Actor:
    if isinstance(operator, Actor):
        return operator
    from service.services.catalog import actor_for

    row = rows.active_user(conn, (operator.username or "").strip().lower())
    return _checked_operator(operator.username, None if row is None else actor_for(row))


@dataclass(frozen=True, kw_only=True)
class _Basis:
    """What an evaluation rests on: the approved spec and reference, read before the write lock."""

    spec_id: int | None = None
    spec_version: int | None = None
    spec_doc: dict | None = None
    spec_text: str | None = None
    ref_id: int | None = None
    ref_preparation: str | None = None
    reference: Any = None
    library: Any = None
    missing: str | None = None  # why nothing can be evaluated against it, if so


def _preparation(doc: dict[str, Any]) -> str | None:
    prep = doc.get("preparation")
    return prep if isinstance(prep, str) else (prep or {}).get("method")


def _basis(conn: Connection, material_id: int) -> _Basis:
    spec_row = rows.approved_spec(conn, material_id)
    if spec_row is None:
        return _Basis(missing="the material has no approved specification; the quality unit must approve one first")
    doc = evaluator.stored_document(spec_row.document)
    spec = {"spec_id": spec_row.id, "spec_version": spec_row.version, "spec_doc": doc, "spec_text": spec_row.document}
    ref_row = rows.approved_reference(conn, material_id, _preparation(doc))
    if ref_row is None:
        return _Basis(**spec, missing="the material has no approved reference spectrum; the quality unit must "
                                      "approve one first")
    ref = {"ref_id": ref_row.id, "ref_preparation": ref_row.preparation}

    def load_ref(ref_id: int) -> tuple[bytes, str]:
        return rows.reference_file(conn, ref_id)

    entries = rows.library_entries(conn)
    try:
        reference = evaluator.reference_spectrum(ref_row.sha256, lambda: load_ref(ref_row.id))
        library = evaluator.library_for(entries, load_ref)
    except BandgateError as exc:
        return _Basis(**spec, **ref, missing=f"the approved reference cannot be used: {exc.message}")
    return _Basis(**spec, **ref, reference=reference, library=library)


def _basis_changed(conn: Connection, material_id: int, basis: _Basis) -> str | None:
    """Under the write lock: why the approved spec and reference no longer match ``basis``, if they don't."""
    spec_id, ref_id = rows.approved_ids(conn, material_id, _preparation(basis.spec_doc or {}))
    if spec_id is None:
        return "the material has no approved specification; the quality unit must approve one first"
    if spec_id != basis.spec_id:
        return "the approved specification or reference changed during the upload; upload the file again"
    if ref_id is None:
        return "the material has no approved reference spectrum; the quality unit must approve one first"
    if ref_id != basis.ref_id:
        return "the approved specification or reference changed during the upload; upload the file again"
    return None


def _evaluate(data: bytes, file_name: str, basis: _Basis) -> tuple[str, str, Any, str]:
    """(status, reason, evaluation, the file's SHA-256 as the reader took it or "") -- runs outside the write lock.

    The reader hashes the very bytes it reads (``meta.sha256``), so the upload does not hash them again.
    """
    try:
        sample = evaluator.read_spectrum(data, file_name=file_name)
    except UnusableInput as exc:
        return "unreadable", exc.message, None, ""
    file_sha256 = sample.meta.sha256
    try:
        spec = evaluator.parse_specification(basis.spec_doc, stored_text=basis.spec_text)  # type: ignore[arg-type]
        result = evaluator.evaluate(sample=sample, spec=spec, reference=basis.reference, library=basis.library,
                                    reference_preparation=basis.ref_preparation)
    except BandgateError as exc:
        return "unreadable", f"the spectrum could not be evaluated: {exc.message}", None, file_sha256
    return "accepted", "", result, file_sha256


def record_measurement(engine: Engine, actor: Actor, *, lot_code: str, container: int, instrument_code: str,
                       data: bytes, file_name: str = "", check_days: float = DEFAULT_CHECK_DAYS) -> MeasurementView:
    """Keep an uploaded spectrum, evaluate it and move the lot on; see the module docstring."""
    view, _state = record_measurement_with_state(engine, actor, lot_code=lot_code, container=container,
                                                 instrument_code=instrument_code, data=data, file_name=file_name,
                                                 check_days=check_days)
    return view


def record_measurement_with_state(
    engine: Engine, actor: Actor | NamedOperator, *, lot_code: str, container: int, instrument_code: str, data: bytes,
    file_name: str = "", check_days: float = DEFAULT_CHECK_DAYS,
) -> tuple[MeasurementView, str]:
    """`record_measurement`, also giving the lot's state as committed by the same transaction.

    The upload answer reports the lot's state; taking it from the write saves a read afterwards.

    The file is read and evaluated before the write lock is taken (the slow part runs in
    parallel), and everything that does not depend on the records (the evaluation document, the
    digests) is computed then too; the write transaction re-checks everything and stores the
    record, the evaluation and the audit events together, and the answer is built after it.
    ``actor`` may be a `NamedOperator`: the person is then looked up in the first transaction.
    """
    if not isinstance(data, (bytes, bytearray)):
        raise InvalidInput("the spectrum file must be bytes", fields=[FieldProblem("file", "upload a file")])
    if not isinstance(container, int) or isinstance(container, bool):
        raise InvalidInput("the container must be a number", fields=[FieldProblem("container", "give its number")])
    data = bytes(data)
    file_name = (file_name or "").replace("\x00", "")[:MAX_FILE_NAME]

    with UnitOfWork(engine, write=False) as uow:  # no lock: look up what the evaluation rests on
        conn = uow.connection
        actor = _operator(conn, actor)
        target = _target(conn, lot_code=lot_code, container=container, instrument_code=instrument_code)
        basis = _basis(conn, target.lot.material_id)
    status, reason, evaluation, sha256 = "refused", basis.missing or "", None, ""
    if basis.missing is None:
        status, reason, evaluation, sha256 = _evaluate(data, file_name, basis)
    sha256 = sha256 or sha256_hex(data)
    document_dict = evaluation.as_dict() if evaluation is not None else None
    document = canonical_json(document_dict) if document_dict is not None else ""
    document_sha256 = sha256_hex(document)

    with UnitOfWork(engine) as uow:  # the write lock: judge again on the latest state, then store
        conn = uow.connection
        target = _target(conn, lot_code=lot_code, container=container, instrument_code=instrument_code)
        lot, cont, inst = target.lot, target.container, target.instrument
        assert cont is not None and inst is not None  # _target refuses unknown names
        history = rows.container_history(conn, cont.id)
        standing, _facts = instrument_standing(conn, instrument_id=inst.id, code=inst.code, active=inst.active,
                                               check_days=check_days)
        refusal = _refusal(lot, cont, history, standing) or _basis_changed(conn, lot.material_id, basis)
        if refusal is not None:
            status, reason, evaluation = "refused", refusal, None
        received = utc_now()
        retest_of = _retest_of(history)
        values: dict[str, Any] = {
            "lot_id": lot.id, "container_id": cont.id, "instrument_id": inst.id, "operator_id": actor.user_id,
            "file_id": rows.insert_file(conn, data=data, sha256=sha256, created_at=received),
            "sha256": sha256, "size": len(data), "file_name": file_name, "received_at": received,
            "status": status, "reason": reason, "retest_of_id": retest_of}
        m = rows.insert_measurement(conn, values)
        sh.audit(conn, actor, "measurement.recorded", "measurement", m.id, new={
            "lot": lot.code, "container": cont.number, "instrument": inst.code, "sha256": m.sha256, "size": m.size,
            "file_name": m.file_name, "status": status, "reason": reason, "retest_of_id": retest_of})
        ev_row = None
        lot_state_after = lot.state
        if evaluation is not None:
            ev_values: dict[str, Any] = {
                "measurement_id": m.id, "verdict": str(evaluation.verdict), "document": document,
                "spec_version_id": basis.spec_id, "reference_id": basis.ref_id,
                "software_version": __version__, "created_at": utc_now()}
            ev_row = rows.insert_evaluation(conn, ev_values)
            sh.audit(conn, actor, "evaluation.recorded", "evaluation", ev_row.id, new={
                "measurement_id": m.id, "verdict": ev_row.verdict, "spec_version_id": basis.spec_id,
                "spec_version": basis.spec_version, "reference_id": basis.ref_id,
                "software_version": __version__, "document_sha256": document_sha256})
            if not cont.sampled:
                rows.mark_sampled(conn, cont.id, utc_now())
                sh.audit(conn, actor, "container.sampled", "lot_container", cont.id, old={"sampled": False},
                         new={"lot": lot.code, "container": cont.number, "sampled": True})
            if lot_state_after == LotState.quarantine.value:
                lot_state_after = _step_lot(conn, actor, lot.id, lot_state_after, LotStep.first_measurement)
            if lot_state_after == LotState.testing.value:
                step = _settling_step(conn, lot.id)
                if step is not None:
                    lot_state_after = _step_lot(conn, actor, lot.id, lot_state_after, step)
        uow.commit()
    view = measurement_view(m, lot_code=lot.code, container=cont.number, instrument=inst.code,
                            operator=actor.printed_name, evaluation=ev_row,
                            spec_version=basis.spec_version if ev_row else None, invalidation_cause=None,
                            document=document_dict)
    if status == "unreadable":
        raise UploadUnreadable(reason, measurement=view)
    if status == "refused":
        raise MeasurementRefused(reason, measurement=view)
    return view, lot_state_after


def get_measurement(engine: Engine, measurement_id: int) -> MeasurementView:
    with UnitOfWork(engine, write=False) as uow:
        m = repo.measurement_by_id(uow.session, measurement_id)
        if m is None:
            raise NotFound(f"no measurement with id {measurement_id}")
        lot = repo.lot_by_id(uow.session, m.lot_id)
        for v in evidence(uow.session, lot).measurements:  # type: ignore[arg-type]
            if v.id == measurement_id:
                return v
        raise NotFound(f"no measurement with id {measurement_id}")  # pragma: no cover


def measurement_file(engine: Engine, measurement_id: int) -> tuple[MeasurementView, bytes]:
    """The measurement and its original bytes, exactly as received."""
    view = get_measurement(engine, measurement_id)
    with UnitOfWork(engine, write=False) as uow:
        m = repo.measurement_by_id(uow.session, measurement_id)
        f = repo.file_by_id(uow.session, m.file_id)  # type: ignore[union-attr]
        return view, bytes(f.content)  # type: ignore[union-attr]
