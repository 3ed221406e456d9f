"""Review of a failed lot and QA disposition: the signed steps that decide a lot.

* A reviewer either rejects a failed lot, or invalidates a failing measurement with a documented
  assignable cause (then the container may be retested; the original stays visible).
* The quality unit releases or rejects a conforming lot. A computed pass never releases a lot.
* The one who measured a lot cannot review or dispose of it (second-person review).
* ``lot_decisions`` holds at most one row per lot (unique), so a lot is decided exactly once even
  if two people press the button at the same moment.
"""

from __future__ import annotations

from sqlalchemy.engine import Engine

from service.errors import Conflict, InvalidInput, NotFound
from service.release.actor import Actor, check_reviewer_did_not_measure
from service.release.lot_states import LotState, LotStep
from service.release.permissions import Action
from service.release.signing import Meaning
from service.store import repositories as repo
from service.store.tables import LotDecision, MeasurementInvalidation, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services.lots import evidence, lot_view
from service.services.measurements import set_state, settle_lot
from service.services.views import LotView, MeasurementView

MAX_REASON = 4000


def _decide(engine: Engine, actor: Actor, *, lot_code: str, step: LotStep, outcome: str, stage: str,
            meaning: Meaning, reason: str) -> LotView:
    with UnitOfWork(engine) as uow:
        s = uow.session
        lot = sh.lot(s, lot_code)
        if repo.decision_for(s, lot.id) is not None:  # type: ignore[arg-type]
            raise Conflict(f"lot {lot.code} has already been decided ({LotState(lot.state).label})")
        check_reviewer_did_not_measure(reviewer=actor, measured_by=repo.operators_of_lot(s, lot.id))  # type: ignore[arg-type]
        old_state = lot.state
        set_state(s, actor, lot, step, reason=reason)  # raises StepRefused from a wrong state
        sig = sh.sign(s, actor, record_type="lot", record_id=lot.id, meaning=meaning, reason=reason,  # type: ignore[arg-type]
                      action=Action.sign_review if stage == "review" else Action.sign_disposition)
        decision = LotDecision(lot_id=lot.id, outcome=outcome, stage=stage, signature_id=sig.id,
                               decided_at=sig.signed_at, decided_by=actor.user_id)
        repo.add(s, decision)
        sh.audit(s, actor, f"lot.{outcome}", "lot", lot.id, old={"state": old_state},
                 new={"state": lot.state, "outcome": outcome, "stage": stage, "signature_id": sig.id,
                      "decision_id": decision.id}, reason=reason)
        uow.commit()
        return lot_view(s, lot)


def reject_after_review(engine: Engine, actor: Actor, *, lot_code: str, reason: str) -> LotView:
    """A reviewer rejects a lot that failed its identity test (signed: 'rejected')."""
    why = sh.require_text(reason, "reason", "a reason for the rejection", max_len=MAX_REASON)
    return _decide(engine, actor, lot_code=lot_code, step=LotStep.review_rejected, outcome="rejected",
                   stage="review", meaning=Meaning.rejected, reason=why)


def dispose_lot(engine: Engine, actor: Actor, *, lot_code: str, outcome: str, reason: str = "") -> LotView:
    """QA disposition of a conforming lot: ``outcome`` is 'released' or 'rejected' (signed)."""
    if outcome == "released":
        return _decide(engine, actor, lot_code=lot_code, step=LotStep.qa_released, outcome="released",
                       stage="disposition", meaning=Meaning.released, reason=(reason or "").strip()[:MAX_REASON])
    if outcome == "rejected":
        why = sh.require_text(reason, "reason", "a reason for the rejection", max_len=MAX_REASON)
        return _decide(engine, actor, lot_code=lot_code, step=LotStep.qa_rejected, outcome="rejected",
                       stage="disposition", meaning=Meaning.rejected, reason=why)
    raise InvalidInput(f"unknown disposition {outcome!r}; use 'released' or 'rejected'")


def invalidate_measurement(engine: Engine, actor: Actor, *, measurement_id: int, cause: str) -> MeasurementView:
    """Set a failing measurement aside with a documented assignable cause (signed: 'invalidated').

    The lot goes back to testing so the container can be retested; the retest is a new
    measurement linked to this one, which stays visible with its cause.
    """
    why = sh.require_text(cause, "cause", "the assignable cause (e.g. a preparation error)", max_len=MAX_REASON)
    with UnitOfWork(engine) as uow:
        s = uow.session
        m = repo.measurement_by_id(s, measurement_id)
        if m is None:
            raise NotFound(f"no measurement with id {measurement_id}")
        lot = repo.lot_by_id(s, m.lot_id)
        assert lot is not None
        ev = evidence(s, lot, with_documents=False)
        check_reviewer_did_not_measure(reviewer=actor, measured_by=ev.measured_by)
        view = next(v for v in ev.measurements if v.id == measurement_id)
        if view.invalidated:
            raise Conflict(f"measurement {measurement_id} is already invalidated")
        if view.verdict != "fail":
            raise Conflict(f"measurement {measurement_id} did not fail (verdict: {view.verdict or view.status}); "
                           "only a failing result is invalidated with an assignable cause")
        if lot.state != LotState.awaiting_review.value:
            raise Conflict(f"lot {lot.code} is '{LotState(lot.state).label}'; a measurement is invalidated "
                           "during the review of a failed lot")
        sig = sh.sign(s, actor, record_type="measurement", record_id=measurement_id, meaning=Meaning.invalidated,
                      reason=why)
        inv = MeasurementInvalidation(measurement_id=measurement_id, cause=why, signature_id=sig.id,
                                      created_at=sig.signed_at, created_by=actor.user_id)
        repo.add(s, inv)
        sh.audit(s, actor, "measurement.invalidated", "measurement", measurement_id,
                 old={"invalidated": False}, new={"invalidated": True, "signature_id": sig.id}, reason=why)
        set_state(s, actor, lot, LotStep.measurement_invalidated, reason=why)
        settle_lot(s, actor, lot)
        uow.commit()
        return next(v for v in evidence(s, lot).measurements if v.id == measurement_id)
