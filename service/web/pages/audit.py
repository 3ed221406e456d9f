"""The audit trail: filter by record, person and date; old/new values and reason; chain verification."""

from __future__ import annotations

from datetime import date, datetime, timezone

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from service.web.pages._auth import allow
from service.web.pages._base import need, render

router = APIRouter(include_in_schema=False)

PAGE = 100
SCAN = 1000  # events read when a date filter is given (the use case filters by record and person)


def _date(raw: str, errors: dict[str, str], name: str) -> date | None:
    raw = raw.strip()
    if not raw:
        return None
    try:
        return date.fromisoformat(raw)
    except ValueError:
        errors[name] = f"write the date as YYYY-MM-DD (got {raw[:20]!r})"
        return None


@router.get("/audit", response_class=HTMLResponse, dependencies=[allow("view_audit")])
def audit(request: Request, record_type: str = "", record_id: str = "", person: str = "", date_from: str = "",
          date_to: str = "", offset: int = 0) -> HTMLResponse:
    who = need(request, "view_audit")
    from service.services import audit_trail

    engine = request.app.state.engine
    errors: dict[str, str] = {}
    d_from, d_to = _date(date_from, errors, "date_from"), _date(date_to, errors, "date_to")
    if d_from and d_to and d_to < d_from:
        errors["date_to"] = "the end date is before the start date"
    events = []
    if not errors:
        dated = bool(d_from or d_to)
        events = audit_trail.audit_events(engine, record_type=record_type.strip() or None,
                                          record_id=record_id.strip() or None, username=person.strip() or None,
                                          limit=SCAN if dated else PAGE, offset=0 if dated else max(0, offset))
        if dated:
            def inside(e: dict) -> bool:
                day = datetime.fromisoformat(e["occurred_at"]).astimezone(timezone.utc).date()
                return (d_from is None or day >= d_from) and (d_to is None or day <= d_to)
            events = [e for e in events if inside(e)][:PAGE]
    report = audit_trail.verify_audit(engine)
    values = {"record_type": record_type, "record_id": record_id, "person": person, "date_from": date_from,
              "date_to": date_to}
    return render(request, "audit.html", {"events": events, "report": report, "values": values, "errors": errors,
                                          "offset": offset, "page": PAGE}, person=who, nav="audit",
                  status=422 if errors else 200)
