"""Upload a spectrum for a container, and the evaluation page (plot, criteria, warnings, matches)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, Response

from service.errors import BandgateError, FieldProblem, InvalidInput
from service.web.pages import _records
from service.web.pages._auth import allow
from service.web.pages._base import form_errors, need, render, see_other

router = APIRouter(include_in_schema=False)

UPLOAD_FIELDS = ("container", "instrument", "file")


def _upload_context(engine: Any, code: str, settings: Any) -> dict[str, Any]:
    from service.services import instruments as inst_uc
    from service.services import lots as lots_uc

    lot = lots_uc.get_lot(engine, code)
    containers = [c for c in lot.containers if c.selected]
    instruments = inst_uc.list_instruments(engine, check_days=settings.instrument_check_days)
    return {
        "lot": lot,
        "container_options": [(c.number, f"Container {c.number}" + ("" if c.outcome == "untested" else f" ({c.outcome})"))
                              for c in containers],
        "instrument_options": [(i.code, f"{i.code} — {i.kind}" + ("" if i.qualified else " (not qualified)"))
                               for i in instruments if i.active],
        "max_upload_mb": round(settings.max_upload_bytes / 1024 / 1024, 1),
    }


@router.get("/lots/{code}/upload", response_class=HTMLResponse, dependencies=[allow("record_measurement")])
def upload_form(request: Request, code: str, container: str = "") -> HTMLResponse:
    person = need(request, "record_measurement")
    ctx = _upload_context(request.app.state.engine, code, request.app.state.settings)
    ctx["values"] = {"container": container}
    return render(request, "upload.html", ctx, person=person, nav="queue")


@router.post("/lots/{code}/upload", response_class=HTMLResponse, dependencies=[allow("record_measurement")])
async def upload(request: Request, code: str) -> Response:
    person = need(request, "record_measurement")
    form = await request.form()
    engine, settings = request.app.state.engine, request.app.state.settings
    values = {k: v for k, v in form.items() if isinstance(v, str)}
    ctx = _upload_context(engine, code, settings)
    ctx["values"] = values
    upload = form.get("file")
    problems: list[FieldProblem] = []
    container: int | None = None
    try:
        container = int(str(values.get("container", "")).strip())
    except ValueError:
        problems.append(FieldProblem("container", "choose the container this spectrum was measured from"))
    if not str(values.get("instrument", "")).strip():
        problems.append(FieldProblem("instrument", "choose the instrument the spectrum was measured on"))
    data = b""
    file_name = ""
    if upload is None or isinstance(upload, str) or not getattr(upload, "filename", ""):
        problems.append(FieldProblem("file", "choose the spectrum file (JCAMP-DX or delimited text) to upload"))
    else:
        file_name = upload.filename or ""
        data = await upload.read()
        if not data:
            problems.append(FieldProblem("file", f"the file {file_name!r} is empty; export the spectrum again"))
    try:
        if problems:
            raise InvalidInput("some fields are missing or wrong; see each field", fields=problems)
        from service.services import measurements as meas_uc

        m = meas_uc.record_measurement(engine, _records.actor(person), lot_code=code, container=container,
                                       instrument_code=str(values["instrument"]).strip(), data=data,
                                       file_name=file_name, check_days=settings.instrument_check_days)
    except BandgateError as exc:
        kept = getattr(exc, "measurement", None)
        errors = form_errors(exc, known=UPLOAD_FIELDS)
        if kept is not None and "_form" in errors and len(errors) == 1:
            target = "file" if getattr(kept, "status", "") == "unreadable" else "_form"
            errors = {target: exc.message}
        ctx.update(errors=errors, message=exc.message, kept=kept)
        return render(request, "upload.html", ctx, status=422, person=person, nav="queue")
    return see_other(f"/measurements/{m.id}")


@router.get("/measurements/{measurement_id}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def evaluation_page(request: Request, measurement_id: int, difference: int = 1) -> HTMLResponse:
    person = need(request, "view_records")
    ctx = _records.measurement_context(request.app.state.engine, measurement_id, show_difference=bool(difference))
    return render(request, "evaluation.html", ctx, person=person, nav="queue")


@router.get("/measurements/{measurement_id}/file", dependencies=[allow("view_records")])
def measurement_file(request: Request, measurement_id: int) -> Response:
    """The original bytes exactly as uploaded (never the client's file name as a path)."""
    need(request, "view_records")
    from service.services import measurements as meas_uc

    m, data = meas_uc.measurement_file(request.app.state.engine, measurement_id)
    return Response(data, media_type="application/octet-stream", headers={
        "Content-Disposition": f'attachment; filename="measurement-{m.id}-{m.sha256[:12]}.dat"'})
