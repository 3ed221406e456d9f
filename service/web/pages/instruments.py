"""Instruments with their qualification state; polystyrene check upload and its result page with plot."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, Response

from service.errors import BandgateError
from service.web import plots
from service.web.pages import _records
from service.web.pages._auth import allow
from service.web.pages._base import form_errors, need, render, see_other

router = APIRouter(include_in_schema=False)

# Ph. Eur. 2.2.24 polystyrene wavenumber-scale maxima (cm⁻¹) and tolerances, from memory (see
# ../shared/domain.md); drawn as the windows a check band must fall in. The pass/fail itself is the
# spectral core's `check_polystyrene`, whose own limits are shown in the table.
POLYSTYRENE_WINDOWS = ((3060.0, 1.5), (2849.5, 1.5), (1942.9, 1.5), (1601.2, 1.0), (1583.0, 1.0),
                       (1154.5, 1.0), (1028.3, 1.0))


@router.get("/instruments", response_class=HTMLResponse, dependencies=[allow("view_records")])
def instruments(request: Request) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import instruments as inst_uc

    rows = inst_uc.list_instruments(request.app.state.engine, check_days=request.app.state.settings.instrument_check_days)
    return render(request, "instruments.html", {"instruments": rows}, person=person, nav="instruments")


def _instrument_context(request: Request, code: str) -> dict[str, Any]:
    from service.services import instruments as inst_uc

    engine, days = request.app.state.engine, request.app.state.settings.instrument_check_days
    return {"inst": inst_uc.get_instrument(engine, code, check_days=days),
            "checks": inst_uc.instrument_checks(engine, code, limit=20), "check_days": days}


@router.get("/instruments/{code}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def instrument(request: Request, code: str) -> HTMLResponse:
    person = need(request, "view_records")
    return render(request, "instrument.html", _instrument_context(request, code), person=person, nav="instruments")


@router.post("/instruments/{code}/checks", response_class=HTMLResponse,
             dependencies=[allow("record_instrument_check")])
async def record_check(request: Request, code: str) -> Response:
    person = need(request, "record_instrument_check")
    form = await request.form()
    upload = form.get("file")
    ctx = _instrument_context(request, code)
    if upload is None or isinstance(upload, str) or not getattr(upload, "filename", ""):
        ctx.update(errors={"file": "choose the polystyrene film spectrum file to upload"},
                   message="Nothing was recorded: no file was chosen.")
        return render(request, "instrument.html", ctx, status=422, person=person, nav="instruments")
    data = await upload.read()
    if not data:
        ctx.update(errors={"file": f"the file {upload.filename!r} is empty; export the spectrum again"},
                   message="Nothing was recorded: the file is empty.")
        return render(request, "instrument.html", ctx, status=422, person=person, nav="instruments")
    from service.services import instruments as inst_uc

    try:
        check = inst_uc.record_instrument_check(request.app.state.engine, _records.actor(person),
                                                instrument_code=code, data=data, file_name=upload.filename or "")
    except BandgateError as exc:
        ctx.update(errors=form_errors(exc, known=("file",)), message=exc.message)
        return render(request, "instrument.html", ctx, status=422, person=person, nav="instruments")
    return see_other(f"/instruments/{code}/checks/{check.id}")


@router.get("/instruments/{code}/checks/{check_id}", response_class=HTMLResponse,
            dependencies=[allow("view_records")])
def check_page(request: Request, code: str, check_id: int) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services.check_files import instrument_check_file

    check, data = instrument_check_file(request.app.state.engine, check_id)
    plot, plot_error = None, ""
    try:
        spectrum = _records._absorbance(data, check.file_name)
        found = [c for c in check.result.get("checks", []) if isinstance(c, dict)]
        bands = tuple(plots.BandMark(position_cm1=float(c["measured"])) for c in found
                      if isinstance(c.get("measured"), (int, float)) and 400 <= float(c["measured"]) <= 4000
                      and "resolution" not in str(c.get("name", "")).lower())
        plot = plots.render_svg(plots.SpectrumPlot(
            sample=plots.Trace(x=spectrum.x, y=spectrum.y, label=f"polystyrene film, check {check.id}"),
            required=tuple(plots.Region(low=p - t, high=p + t, label=f"{p:g}") for p, t in POLYSTYRENE_WINDOWS),
            required_label="expected band position ± tolerance", bands=bands, fingerprint=None))
    except (BandgateError, plots.PlotError, ValueError) as exc:
        plot_error = f"the plot cannot be drawn: {getattr(exc, 'message', exc)}"
    return render(request, "instrument_check.html", {"check": check, "code": code, "plot": plot,
                                                     "plot_error": plot_error}, person=person, nav="instruments")
