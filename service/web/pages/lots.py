"""Receive a lot (with its sampling plan and why) and the lot page (screen and print record)."""

from __future__ import annotations

from datetime import date, datetime, timezone
from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, Response

from service.errors import BandgateError, FieldProblem, InvalidInput
from service.web.pages import _records
from service.web.pages._auth import allow
from service.web.pages._base import form_errors, need, render, see_other

router = APIRouter(include_in_schema=False)

RECEIVE_FIELDS = ("material", "supplier", "supplier_lot", "containers", "received_on", "retest_on")


def _receive_options(engine: Any) -> dict[str, Any]:
    from service.services import catalog

    materials = [(m.code, f"{m.code} — {m.name}") for m in catalog.list_materials(engine)]
    suppliers = [(s.name, s.name) for s in catalog.list_suppliers(engine)]
    return {"materials": materials, "suppliers": suppliers}


def _parse_receive(form: dict[str, str]) -> dict[str, Any]:
    """Turn the form into use-case arguments, naming every missing or wrong field at once."""
    problems: list[FieldProblem] = []
    material = form.get("material", "").strip()
    supplier = form.get("supplier", "").strip()
    if not material:
        problems.append(FieldProblem("material", "choose the material received"))
    if not supplier:
        problems.append(FieldProblem("supplier", "choose the supplier"))
    if not form.get("supplier_lot", "").strip():
        problems.append(FieldProblem("supplier_lot", "enter the supplier's lot number as printed on the label"))
    containers: int | None = None
    raw = form.get("containers", "").strip()
    try:
        containers = int(raw)
        if containers < 1:
            raise ValueError
    except ValueError:
        problems.append(FieldProblem("containers", "enter the number of containers received, a whole number of 1 or more"
                                     if raw else "enter the number of containers received"))
    dates: dict[str, date | None] = {}
    for name, what, required in (("received_on", "the date received", True), ("retest_on", "the retest date", False)):
        raw = form.get(name, "").strip()
        if not raw:
            if required:
                problems.append(FieldProblem(name, f"enter {what} (YYYY-MM-DD)"))
            dates[name] = None
            continue
        try:
            dates[name] = date.fromisoformat(raw)
        except ValueError:
            problems.append(FieldProblem(name, f"{what} must be a date written YYYY-MM-DD, not {raw[:20]!r}"))
    if problems:
        raise InvalidInput("some fields are missing or wrong; see each field", fields=problems)
    return {"material_code": material, "supplier_name": supplier, "supplier_lot": form["supplier_lot"].strip(),
            "containers": containers, "received_on": dates["received_on"], "retest_on": dates["retest_on"]}


def _plan_preview(form: dict[str, str], engine: Any) -> dict[str, Any] | None:
    """The plan the lot would get, computed by the same pure rule the use case stores."""
    from service.release.sampling import compute_plan
    from service.services import catalog

    try:
        n = int(form.get("containers", ""))
    except ValueError:
        return None
    if n < 1:
        return None
    reduced = False
    try:
        for link in catalog.supplier_approvals(engine, form.get("material", "")):
            if link.supplier == form.get("supplier") and link.active:
                reduced = link.reduced_plan
    except BandgateError:
        return None
    return compute_plan(containers=n, reduced_plan_allowed=reduced, seed="preview").as_dict()


@router.get("/lots/receive", response_class=HTMLResponse, dependencies=[allow("receive_lot")])
def receive_form(request: Request) -> HTMLResponse:
    person = need(request, "receive_lot")
    values = {"received_on": datetime.now(timezone.utc).date().isoformat()}
    return render(request, "lot_receive.html", {**_receive_options(request.app.state.engine), "values": values},
                  person=person, nav="receive")


@router.post("/lots/receive", response_class=HTMLResponse, dependencies=[allow("receive_lot")])
async def receive(request: Request) -> Response:
    person = need(request, "receive_lot")
    form = {k: str(v) for k, v in (await request.form()).items() if isinstance(v, str)}
    engine = request.app.state.engine
    ctx: dict[str, Any] = {**_receive_options(engine), "values": form}
    if "preview" in form:
        ctx["preview"] = _plan_preview(form, engine)
        return render(request, "lot_receive.html", ctx, person=person, nav="receive")
    try:
        args = _parse_receive(form)
        from service.services import lots as lots_uc

        lot = lots_uc.receive_lot(engine, _records.actor(person), **args)
    except BandgateError as exc:
        ctx["errors"] = form_errors(exc, known=RECEIVE_FIELDS)
        ctx["message"] = exc.message
        return render(request, "lot_receive.html", ctx, status=422, person=person, nav="receive")
    return see_other(f"/lots/{lot.code}?received=1")


@router.get("/lots/{code}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def lot_page(request: Request, code: str, received: int = 0, signed: str = "") -> HTMLResponse:
    person = need(request, "view_records")
    engine = request.app.state.engine
    ctx = _records.lot_context(engine, code, person=person)
    if received:
        ctx["flashes"] = [{"kind": "ok", "text": f"Lot {code} received into quarantine. Its sampling plan is below."}]
    if signed in ("rejected", "released", "invalidated"):
        ctx["flashes"] = [{"kind": "ok", "text": f"Your signature ({signed}) is recorded; it is shown below with "
                                                 "your printed name, the time and its meaning."}]
    return render(request, "lot.html", ctx, person=person, nav="queue")
