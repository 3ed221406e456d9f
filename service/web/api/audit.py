"""The audit trail over the API: verify the chain, read events by record."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request

from service import errors as e
from service import services as uc
from service.release.permissions import Action
from service.web.api.access import ApiRoute, acting_user
from service.web.auth import Principal, require_action
from service.web.api.problems import problems
from service.web.api.schemas import AuditEventOut, AuditVerifyOut, Page

router = APIRouter(tags=["audit"], route_class=ApiRoute)
Audit = Annotated[Principal, require_action(Action.view_audit)]


@router.get("/audit/verify", response_model=AuditVerifyOut, responses=problems(),
            summary="Verify the audit trail",
            description="Recomputes the hash chain, every stored file's SHA-256 and every signature's digest. "
            "`ok` is false with `first_problem` naming the first broken link.")
def verify(request: Request, principal: Audit) -> dict[str, Any]:
    return uc.verify_audit(request.app.state.engine).as_dict()


@router.get(
    "/audit/events", response_model=Page[AuditEventOut], responses=problems(404, 422),
    summary="Read audit events",
    description="Oldest first; `record` narrows to one record as `type:id`, e.g. `lot:IN-2026-00007` "
    "(a lot by its code) or `measurement:12`.",
)
def events(
    request: Request, principal: Audit,
    record: Annotated[str | None, Query(max_length=100, examples=["lot:IN-2026-00007"])] = None,
    limit: Annotated[int, Query(ge=1, le=500)] = 100,
    offset: Annotated[int, Query(ge=0, le=10_000_000)] = 0,
) -> dict[str, Any]:
    engine = request.app.state.engine
    record_type = record_id = None
    if record:
        record_type, sep, record_id = record.partition(":")
        if not sep or not record_type or not record_id:
            raise e.InvalidInput("record must be `type:id`, e.g. lot:IN-2026-00007 or measurement:12",
                                 fields=[e.FieldProblem("record", "type:id")])
        if record_type == "lot" and not record_id.isdigit():
            record_id = str(uc.get_lot(engine, record_id).id)
    items = uc.audit_events(engine, record_type=record_type, record_id=record_id, limit=limit + 1, offset=offset)
    more = len(items) > limit
    return {"items": items[:limit], "total": None, "limit": limit, "offset": offset,
            "next_offset": offset + limit if more else None}
