"""Review of a failed lot (reject, or invalidate a measurement with its cause) and QA disposition.

Each signed decision has its own address and declares its own signing permission:

* ``/lots/{code}/review/reject`` and ``/lots/{code}/review/invalidate?measurement=ID`` (sign_review);
* ``/lots/{code}/disposition/release`` and ``/lots/{code}/disposition/reject`` (sign_disposition).

GET shows the signing page (meaning first, then reason, then password); POST signs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, Response

from service.errors import InvalidInput
from service.web.pages import _records, _signing
from service.web.pages._auth import allow
from service.web.pages._base import need, render, see_other

router = APIRouter(include_in_schema=False)


@dataclass(frozen=True, kw_only=True)
class Decision:
    stage: str  # review | disposition
    name: str  # reject | invalidate | release
    action: str
    meaning: str
    title: str
    reason_label: str
    reason_hint: str
    reason_required: bool
    button: str


DECISIONS = (
    Decision(stage="review", name="reject", action="sign_review", meaning="rejected",
             title="Reject lot {code} after review", reason_label="Reason for the rejection",
             reason_hint="What the evidence shows, e.g. 'required bands at 1740 and 1200 cm⁻¹ absent; "
                         "the material is not the one ordered'.", reason_required=True, button="Sign: reject lot"),
    Decision(stage="review", name="invalidate", action="sign_review", meaning="invalidated",
             title="Invalidate measurement {measurement} of lot {code}", reason_label="Assignable cause",
             reason_hint="The documented cause, e.g. 'ATR crystal not cleaned after the previous sample (lab note "
                         "14)'. The container may then be retested; this measurement stays on record.",
             reason_required=True, button="Sign: invalidate measurement"),
    Decision(stage="disposition", name="release", action="sign_disposition", meaning="released",
             title="Release lot {code}", reason_label="Comment",
             reason_hint="Optional. The release is on the quality unit's authority; the computed result is advice.",
             reason_required=False, button="Sign: release lot"),
    Decision(stage="disposition", name="reject", action="sign_disposition", meaning="rejected",
             title="Reject lot {code} (QA disposition)", reason_label="Reason for the rejection",
             reason_hint="Why the quality unit rejects a lot whose identity tests conformed.",
             reason_required=True, button="Sign: reject lot"),
)


def _signing_for(d: Decision, code: str, measurement: int | None) -> _signing.Signing:
    if d.name == "invalidate" and not measurement:
        raise InvalidInput("choose the measurement to invalidate from the review page",
                           fields=[])
    return _signing.Signing(
        action=d.action, meaning=d.meaning,
        record=f"measurement {measurement} of lot {code}" if d.name == "invalidate" else f"lot {code}",
        title=d.title.format(code=code, measurement=measurement), post_to=f"/lots/{code}/{d.stage}/{d.name}",
        back_to=f"/lots/{code}/{d.stage}", reason_label=d.reason_label, reason_hint=d.reason_hint,
        reason_required=d.reason_required, button=d.button,
        hidden=(("measurement", str(measurement)),) if measurement else ())


def _perform(d: Decision, engine: Any, code: str, measurement: int | None, reason: str) -> Any:
    def run(actor: Any) -> Any:
        from service.services import decisions as dec_uc

        if d.stage == "review" and d.name == "reject":
            return dec_uc.reject_after_review(engine, actor, lot_code=code, reason=reason)
        if d.name == "invalidate":
            return dec_uc.invalidate_measurement(engine, actor, measurement_id=measurement, cause=reason)
        outcome = "released" if d.name == "release" else "rejected"
        return dec_uc.dispose_lot(engine, actor, lot_code=code, outcome=outcome, reason=reason)

    return run


def _register(d: Decision) -> None:
    path = f"/lots/{{code}}/{d.stage}/{d.name}"

    @router.get(path, response_class=HTMLResponse, dependencies=[allow(d.action)],
                name=f"{d.stage}_{d.name}_form")
    def sign_form(request: Request, code: str, measurement: int | None = None) -> HTMLResponse:
        person = need(request, d.action)
        lot = _records.lot_summary(request.app.state.engine, code)
        return _signing.page(request, person, _signing_for(d, code, measurement), extra={"lot": lot})

    @router.post(path, response_class=HTMLResponse, dependencies=[allow(d.action)], name=f"{d.stage}_{d.name}")
    async def sign(request: Request, code: str) -> Response:
        person = need(request, d.action)
        form = {k: v for k, v in (await request.form()).items() if isinstance(v, str)}
        raw = form.get("measurement", "").strip()
        measurement = int(raw) if raw.isdigit() else None
        signing = _signing_for(d, code, measurement)
        engine = request.app.state.engine
        lot = _records.lot_summary(engine, code)
        reason = form.get("reason", "").strip()
        if signing.reason_required and not reason:
            return _signing.page(request, person, signing, values={"reason": reason},
                                 errors={"reason": f"enter the {signing.reason_label.lower()}; it becomes part of "
                                                   "the signed record"},
                                 message="Nothing was signed: the signature needs a reason.", status=422,
                                 extra={"lot": lot})
        _, refused = _signing.sign(request, person, signing, form, _perform(d, engine, code, measurement, reason),
                                   extra={"lot": lot})
        if refused is not None:
            return refused
        return see_other(f"/lots/{code}?signed={signing.meaning}")


for _d in DECISIONS:
    _register(_d)


@router.get("/lots/{code}/review", response_class=HTMLResponse, dependencies=[allow("view_records")])
def review(request: Request, code: str) -> HTMLResponse:
    person = need(request, "view_records")
    ctx = _records.lot_context(request.app.state.engine, code, person=person, with_plots=True)
    return render(request, "review.html", ctx, person=person, nav="queue")


@router.get("/lots/{code}/disposition", response_class=HTMLResponse, dependencies=[allow("view_records")])
def disposition(request: Request, code: str) -> HTMLResponse:
    person = need(request, "view_records")
    ctx = _records.lot_context(request.app.state.engine, code, person=person, with_plots=False)
    return render(request, "disposition.html", ctx, person=person, nav="queue")
