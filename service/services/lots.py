"""Use cases for lots: receive a lot (plan computed and stored, containers listed), read and list lots."""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import date
from typing import Any

from sqlalchemy.engine import Engine
from sqlmodel import Session

from service.errors import Conflict, FieldProblem, InvalidInput
from service.release.actor import Actor
from service.release.digests import canonical_json
from service.release.lot_states import STATE_LABELS, ContainerOutcome, ContainerResult, LotState, container_outcome
from service.release.sampling import MAX_CONTAINERS, compute_plan
from service.store import repositories as repo
from service.store.tables import Lot, LotContainer, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services.views import ContainerView, EvaluationView, LotView, MeasurementView, utc


def _lot_code(session: Session) -> str:
    """Internal lot codes: IN-<year>-<5-digit serial>; generated under the write lock, so unique."""
    year = utc_now().year
    prefix = f"IN-{year}-"
    n = repo.count_lots_with_prefix(session, prefix) + 1
    while repo.lot_by_code(session, f"{prefix}{n:05d}") is not None:  # pragma: no cover - defensive
        n += 1
    return f"{prefix}{n:05d}"


def _check_date(value: object, field: str, what: str, *, required: bool) -> date | None:
    if value is None and not required:
        return None
    if not isinstance(value, date):
        raise InvalidInput(f"{what} must be a date", fields=[FieldProblem(field, "give a date as YYYY-MM-DD")])
    return value


def receive_lot(engine: Engine, actor: Actor, *, material_code: str, supplier_name: str, supplier_lot: str,
                containers: int, received_on: date, retest_on: date | None = None) -> LotView:
    """Receive a lot into quarantine: compute and store its sampling plan and list its containers."""
    supplier_lot = sh.require_text(supplier_lot, "supplier_lot", "the supplier's lot number", max_len=100)
    if not isinstance(containers, int) or isinstance(containers, bool) or not 1 <= containers <= MAX_CONTAINERS:
        raise InvalidInput(f"containers must be a whole number from 1 to {MAX_CONTAINERS}",
                           fields=[FieldProblem("containers", "count the containers received")])
    received = _check_date(received_on, "received_on", "the date received", required=True)
    retest = _check_date(retest_on, "retest_on", "the retest date", required=False)
    if retest is not None and received is not None and retest <= received:
        raise InvalidInput("the retest date must be after the date received",
                           fields=[FieldProblem("retest_on", "give a later retest or expiry date")])
    with UnitOfWork(engine) as uow:
        s = uow.session
        m = sh.material(s, material_code)
        sup = sh.supplier(s, supplier_name)
        link = repo.approval_for(s, m.id, sup.id)  # type: ignore[arg-type]
        if link is None or not link.active:
            raise Conflict(f"supplier {sup.name!r} is not approved for material {m.code}; approve the supplier "
                           "for this material before receiving lots from it")
        code = _lot_code(s)
        plan = compute_plan(containers=containers, reduced_plan_allowed=link.reduced_plan, seed=code)
        now = utc_now()
        lot = Lot(code=code, material_id=m.id, supplier_id=sup.id, supplier_lot=supplier_lot,
                  containers_received=containers, received_on=received, retest_on=retest,
                  state=LotState.quarantine.value, plan=canonical_json(plan.as_dict()), created_at=now,
                  created_by=actor.user_id, state_changed_at=now)
        repo.add(s, lot)
        chosen = set(plan.selected)
        s.add_all([LotContainer(lot_id=lot.id, number=i, selected=i in chosen, sampled=False)
                   for i in range(1, containers + 1)])
        s.flush()
        sh.audit(s, actor, "lot.received", "lot", lot.id, new={
            "code": code, "material": m.code, "supplier": sup.name, "supplier_lot": supplier_lot,
            "containers_received": containers, "received_on": received, "retest_on": retest,
            "state": lot.state, "plan": plan.as_dict()})
        uow.commit()
        return lot_view(s, lot)


@dataclass(frozen=True)
class _Evidence:
    containers: list[ContainerView]
    results: list[ContainerResult]
    measurements: list[MeasurementView]
    measured_by: set[int]


def evidence(session: Session, lot: Lot, *, with_documents: bool = True) -> _Evidence:
    """Containers with their outcomes and every measurement of the lot, from the stored rows."""
    conts = repo.containers(session, lot.id)  # type: ignore[arg-type]
    numbers = {c.id: c.number for c in conts}
    ms = repo.measurements_for_lot(session, lot.id)  # type: ignore[arg-type]
    ids = [m.id for m in ms if m.id is not None]
    evs = repo.evaluations_for(session, ids)
    invs = repo.invalidations_for(session, ids)
    sigs: dict[int, list] = {}
    for sig in repo.signatures_for(session, "measurement", ids):
        sigs.setdefault(sig.record_id, []).append(sh.signature_view(sig))
    spec_versions: dict[int, int | None] = {}
    instruments: dict[int, str] = {}
    operators: dict[int, str] = {}
    verdicts: dict[int, list[str]] = {c.id: [] for c in conts}  # type: ignore[misc]
    views: list[MeasurementView] = []
    for m in ms:
        ev = evs.get(m.id)  # type: ignore[arg-type]
        inv = invs.get(m.id)  # type: ignore[arg-type]
        if ev is not None and inv is None and m.status == "accepted":
            verdicts[m.container_id].append(ev.verdict)
        if ev is not None and ev.spec_version_id not in spec_versions:
            sv = repo.spec_by_id(session, ev.spec_version_id)
            spec_versions[ev.spec_version_id] = sv.version if sv else None
        if m.instrument_id not in instruments:
            inst = repo.instrument_by_id(session, m.instrument_id)
            instruments[m.instrument_id] = inst.code if inst else "?"
        if m.operator_id not in operators:
            u = repo.user_by_id(session, m.operator_id)
            operators[m.operator_id] = u.printed_name if u else "?"
        views.append(measurement_view(m, lot_code=lot.code, container=numbers.get(m.container_id, -1),
                                      instrument=instruments[m.instrument_id], operator=operators[m.operator_id],
                                      evaluation=ev, spec_version=spec_versions.get(ev.spec_version_id) if ev else None,
                                      invalidation_cause=inv.cause if inv else None,
                                      signatures=tuple(sigs.get(m.id, ())), with_document=with_documents))  # type: ignore[arg-type]
    containers_out, results = [], []
    for c in conts:
        outcome = container_outcome(verdicts[c.id]) if c.selected else ContainerOutcome.untested  # type: ignore[index]
        containers_out.append(ContainerView(number=c.number, selected=c.selected, sampled=c.sampled,
                                            outcome=outcome.value))
        if c.selected:
            results.append(ContainerResult(number=c.number, outcome=outcome))
    return _Evidence(containers_out, results, views, {m.operator_id for m in ms})


def measurement_view(m: Any, *, lot_code: str, container: int, instrument: str, operator: str,
                     evaluation: object, spec_version: int | None, invalidation_cause: str | None,
                     signatures: tuple = (), with_document: bool = True,
                     document: dict[str, Any] | None = None) -> MeasurementView:
    """The view of a measurement row (ORM or plain; the same attributes) and its evaluation row.

    ``document``: the evaluation's document already parsed (the dict its stored JSON was made from),
    to save parsing the stored text again.
    """
    ev_view = None
    if evaluation is not None:
        ev = evaluation
        if not with_document:
            document = {}
        elif document is None:
            document = json.loads(ev.document)  # type: ignore[attr-defined]
        ev_view = EvaluationView(id=ev.id, verdict=ev.verdict,  # type: ignore[attr-defined]
                                 document=document,
                                 spec_version_id=ev.spec_version_id, spec_version=spec_version,  # type: ignore[attr-defined]
                                 reference_id=ev.reference_id, software_version=ev.software_version,  # type: ignore[attr-defined]
                                 created_at=utc(ev.created_at))  # type: ignore[attr-defined]
    return MeasurementView(id=m.id or 0, lot_code=lot_code, container=container, instrument=instrument,
                           operator_id=m.operator_id, operator=operator, sha256=m.sha256, size=m.size,
                           file_name=m.file_name, received_at=utc(m.received_at) or m.received_at, status=m.status,
                           reason=m.reason, retest_of_id=m.retest_of_id, evaluation=ev_view,
                           invalidated=invalidation_cause is not None, invalidation_cause=invalidation_cause,
                           signatures=signatures)


def lot_view(session: Session, lot: Lot, *, with_documents: bool = True) -> LotView:
    m = repo.material_by_id(session, lot.material_id)
    sup = repo.supplier_by_id(session, lot.supplier_id)
    ev = evidence(session, lot, with_documents=with_documents)
    decision = repo.decision_for(session, lot.id)  # type: ignore[arg-type]
    receiver = repo.user_by_id(session, lot.created_by)
    return LotView(
        id=lot.id or 0, code=lot.code, material=m.code if m else "?", material_name=m.name if m else "?",
        supplier=sup.name if sup else "?", supplier_lot=lot.supplier_lot, containers_received=lot.containers_received,
        received_on=lot.received_on, retest_on=lot.retest_on, state=lot.state,
        state_label=STATE_LABELS[LotState(lot.state)], plan=json.loads(lot.plan),
        created_at=utc(lot.created_at) or lot.created_at, created_by=lot.created_by,
        state_changed_at=utc(lot.state_changed_at) or lot.state_changed_at,
        containers=tuple(ev.containers), measurements=tuple(ev.measurements),
        signatures=tuple(sh.signature_view(s) for s in repo.signatures_for(session, "lot", [lot.id])),  # type: ignore[list-item]
        decision=None if decision is None else {
            "outcome": decision.outcome, "stage": decision.stage, "signature_id": decision.signature_id,
            "decided_at": utc(decision.decided_at), "decided_by": decision.decided_by},
        received_by=receiver.printed_name if receiver else "",
    )


def get_lot(engine: Engine, code: str) -> LotView:
    with UnitOfWork(engine, write=False) as uow:
        return lot_view(uow.session, sh.lot(uow.session, code))


def list_lots(engine: Engine, *, state: str | None = None, material_code: str | None = None,
              search: str | None = None, limit: int = 50, offset: int = 0) -> tuple[list[LotView], int]:
    """A page of lots (newest first) without measurement documents, and the total count."""
    if state is not None and state not in {s.value for s in LotState}:
        raise InvalidInput(f"unknown lot state {state!r}",
                           fields=[FieldProblem("state", "use one of " + ", ".join(s.value for s in LotState))])
    limit = max(1, min(int(limit), 500))
    with UnitOfWork(engine, write=False) as uow:
        mid = sh.material(uow.session, material_code).id if material_code else None
        rows, total = repo.list_lots(uow.session, state=state, material_id=mid, search=search,
                                     limit=limit, offset=max(0, int(offset)))
        return [lot_view(uow.session, r, with_documents=False) for r in rows], total
