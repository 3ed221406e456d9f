"""The work queue (home page): lots by state for the signed-in person's role, with counts, age and search."""

from __future__ import annotations

from dataclasses import dataclass

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse

from service.web.pages._auth import allow
from service.web.pages._base import need, render

router = APIRouter(include_in_schema=False)


@dataclass(frozen=True, kw_only=True)
class Queue:
    state: str
    title: str
    for_roles: frozenset[str]
    what_next: str


QUEUES = (
    Queue(state="quarantine", title="To sample", for_roles=frozenset({"technician"}),
          what_next="Sample the containers the plan lists, then upload their spectra."),
    Queue(state="testing", title="To test", for_roles=frozenset({"technician"}),
          what_next="Containers still without a usable result."),
    Queue(state="awaiting_review", title="Failed, awaiting review", for_roles=frozenset({"supervisor"}),
          what_next="Review the evidence: reject the lot, or invalidate a measurement with its cause."),
    Queue(state="awaiting_disposition", title="Conforms, awaiting QA disposition", for_roles=frozenset({"quality"}),
          what_next="Release or reject the lot; a computed pass is not a release."),
)
PER_QUEUE = 25


@router.get("/", response_class=HTMLResponse, dependencies=[allow("view_records")])
def work_queue(request: Request, q: str = "") -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import lots as lots_uc

    engine = request.app.state.engine
    mine = [qu for qu in QUEUES if qu.for_roles & person.roles]
    others = [qu for qu in QUEUES if qu not in mine]
    sections = []
    for qu in mine + others:
        rows, total = lots_uc.list_lots(engine, state=qu.state, limit=PER_QUEUE)
        rows = sorted(rows, key=lambda lot: lot.state_changed_at)  # oldest first: it has waited longest
        sections.append({"queue": qu, "lots": rows, "total": total, "mine": qu in mine,
                         "oldest": rows[0].state_changed_at if rows else None})
    found = None
    query = q.strip()[:100]
    if query:
        found, _ = lots_uc.list_lots(engine, search=query, limit=50)
    return render(request, "queue.html", {"sections": sections, "q": query, "found": found}, person=person,
                  nav="queue")
