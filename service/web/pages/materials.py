"""Materials, specification versions (view, new-version editor, signed approval) and reference spectra."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import HTMLResponse, Response

from service.errors import BandgateError, UnusableInput
from service.web.pages import _records, _signing, _spec_form
from service.web.pages._auth import allow
from service.web.pages._base import form_errors, need, render, see_other

router = APIRouter(include_in_schema=False)


@router.get("/materials", response_class=HTMLResponse, dependencies=[allow("view_records")])
def materials(request: Request) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import catalog
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    rows = []
    for mat in catalog.list_materials(engine):
        try:
            eff = spec_uc.effective_spec(engine, mat.code)
        except BandgateError:
            eff = None
        refs = spec_uc.list_references(engine, material_code=mat.code, status="approved")
        rows.append({"m": mat, "spec": eff, "refs": refs})
    return render(request, "materials.html", {"rows": rows}, person=person, nav="materials")


@router.get("/materials/{code}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def material(request: Request, code: str) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import catalog
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    ctx = {"mat": catalog.get_material(engine, code), "specs": spec_uc.spec_versions(engine, code),
           "refs": spec_uc.list_references(engine, material_code=code),
           "suppliers": catalog.supplier_approvals(engine, code)}
    return render(request, "material.html", ctx, person=person, nav="materials")


@router.get("/specs/{spec_id}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def spec_page(request: Request, spec_id: int) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    spec = spec_uc.get_spec_version(engine, spec_id)
    return render(request, "spec.html", {"spec": spec, "doc": spec.document,
                                         "sigs": spec_uc.signatures(engine, "specification_version", spec.id)},
                  person=person, nav="materials")


@router.get("/materials/{code}/specs/new", response_class=HTMLResponse, dependencies=[allow("manage_methods")])
def spec_editor(request: Request, code: str, start: int | None = None) -> HTMLResponse:
    person = need(request, "manage_methods")
    from service.services import catalog
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    mat = catalog.get_material(engine, code)
    versions = spec_uc.spec_versions(engine, code)
    base = next((v for v in versions if v.id == start), None) or (versions[-1] if versions else None)
    values = _spec_form.values_from_document(base.document if base else {"material": code, "name": mat.name})
    return render(request, "spec_edit.html", _spec_form.context(mat, values, base=base), person=person,
                  nav="materials")


@router.post("/materials/{code}/specs/new", response_class=HTMLResponse, dependencies=[allow("manage_methods")])
async def spec_save(request: Request, code: str) -> Response:
    person = need(request, "manage_methods")
    from service.services import catalog
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    mat = catalog.get_material(engine, code)
    form = {k: v for k, v in (await request.form()).items() if isinstance(v, str)}
    values = _spec_form.values_from_form(form)
    if "more" in form:
        values["band_rows"] += 3
        values["forbidden_rows"] += 2
        return render(request, "spec_edit.html", _spec_form.context(mat, values), person=person, nav="materials")
    if "suggest" in form:
        ctx = _spec_form.context(mat, values)
        try:
            _spec_form.apply_suggestions(engine, code, values)
            ctx = _spec_form.context(mat, values)
            ctx["flashes"] = [{"kind": "ok", "text": "Band rows filled from the approved reference's measured bands. "
                                                      "Check every row: a suggestion is a starting point, not a rule."}]
        except BandgateError as exc:
            ctx.update(errors={"_form": exc.message}, message="No suggestion could be made.")
            return render(request, "spec_edit.html", ctx, status=422, person=person, nav="materials")
        return render(request, "spec_edit.html", ctx, person=person, nav="materials")
    errors, document = _spec_form.document_from_values(code, values)
    try:
        if errors:
            raise _spec_form.FormProblems(errors)
        spec = spec_uc.create_spec_draft(engine, _records.actor(person), material_code=code, document=document)
    except _spec_form.FormProblems as exc:
        ctx = _spec_form.context(mat, values)
        ctx.update(errors=exc.errors, message="Nothing was saved: some fields are missing or wrong.")
        return render(request, "spec_edit.html", ctx, status=422, person=person, nav="materials")
    except BandgateError as exc:
        ctx = _spec_form.context(mat, values)
        ctx.update(errors=_spec_form.map_errors(exc, values), message=exc.message)
        return render(request, "spec_edit.html", ctx, status=422, person=person, nav="materials")
    return see_other(f"/specs/{spec.id}?drafted=1")


def _approval_signing(kind: str, record_id: int, label: str) -> _signing.Signing:
    path = f"/{kind}/{record_id}/approve"
    return _signing.Signing(action="sign_approval", meaning="approved", record=label, title=f"Approve {label}",
                            post_to=path, back_to=f"/{kind}/{record_id}", reason_label="Comment",
                            reason_hint="Optional: what you checked before approving.", reason_required=False,
                            button="Sign: approve")


@router.get("/specs/{spec_id}/approve", response_class=HTMLResponse, dependencies=[allow("sign_approval")])
def spec_approve_form(request: Request, spec_id: int) -> HTMLResponse:
    person = need(request, "sign_approval")
    from service.services import specifications as spec_uc

    spec = spec_uc.get_spec_version(request.app.state.engine, spec_id)
    label = f"specification {spec.material} version {spec.version}"
    return _signing.page(request, person, _approval_signing("specs", spec_id, label))


@router.post("/specs/{spec_id}/approve", response_class=HTMLResponse, dependencies=[allow("sign_approval")])
async def spec_approve(request: Request, spec_id: int) -> Response:
    person = need(request, "sign_approval")
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    spec = spec_uc.get_spec_version(engine, spec_id)
    form = {k: v for k, v in (await request.form()).items() if isinstance(v, str)}
    signing = _approval_signing("specs", spec_id, f"specification {spec.material} version {spec.version}")
    reason = form.get("reason", "").strip()
    _, refused = _signing.sign(request, person, signing, form, lambda actor: spec_uc.approve_spec_version(
        engine, actor, spec_version_id=spec_id, reason=reason))
    return refused or see_other(f"/specs/{spec_id}")


@router.get("/references/{ref_id}", response_class=HTMLResponse, dependencies=[allow("view_records")])
def reference_page(request: Request, ref_id: int) -> HTMLResponse:
    person = need(request, "view_records")
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    ref, data = spec_uc.reference_file(engine, ref_id)
    plot, plot_error = None, ""
    try:
        spectrum = _records._absorbance(data, ref.file_name)
        plot = _records.spectrum_plot(sample=spectrum, sample_label=f"reference {ref.id} ({ref.preparation})",
                                      reference=None, reference_label="", doc=None, show_difference=False)
    except BandgateError as exc:
        plot_error = f"the plot cannot be drawn: {exc.message}"
    return render(request, "reference.html", {"ref": ref, "plot": plot, "plot_error": plot_error,
                                              "sigs": spec_uc.signatures(engine, "reference_spectrum", ref.id)},
                  person=person, nav="materials")


@router.get("/references/{ref_id}/approve", response_class=HTMLResponse, dependencies=[allow("sign_approval")])
def reference_approve_form(request: Request, ref_id: int) -> HTMLResponse:
    person = need(request, "sign_approval")
    return _signing.page(request, person, _approval_signing("references", ref_id, f"reference spectrum {ref_id}"))


@router.post("/references/{ref_id}/approve", response_class=HTMLResponse, dependencies=[allow("sign_approval")])
async def reference_approve(request: Request, ref_id: int) -> Response:
    person = need(request, "sign_approval")
    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    form = {k: v for k, v in (await request.form()).items() if isinstance(v, str)}
    reason = form.get("reason", "").strip()
    _, refused = _signing.sign(request, person, _approval_signing("references", ref_id, f"reference spectrum {ref_id}"),
                               form, lambda actor: spec_uc.approve_reference(engine, actor, reference_id=ref_id,
                                                                            reason=reason))
    return refused or see_other(f"/references/{ref_id}")


REF_FIELDS = ("preparation", "instrument", "conditions", "measured_on", "file")


def _ref_context(engine: Any, code: str) -> dict[str, Any]:
    from service.evaluation import PREPARATIONS
    from service.services import catalog
    from service.services import instruments as inst_uc

    return {"mat": catalog.get_material(engine, code),
            "preparations": [(p, prep.name if hasattr(prep, "name") else p) for p, prep in PREPARATIONS.items()],
            "instruments": [(i.code, f"{i.code} — {i.kind}") for i in inst_uc.list_instruments(engine)]}


@router.get("/materials/{code}/references/new", response_class=HTMLResponse, dependencies=[allow("manage_methods")])
def reference_form(request: Request, code: str) -> HTMLResponse:
    person = need(request, "manage_methods")
    return render(request, "reference_new.html", _ref_context(request.app.state.engine, code), person=person,
                  nav="materials")


@router.post("/materials/{code}/references/new", response_class=HTMLResponse, dependencies=[allow("manage_methods")])
async def reference_add(request: Request, code: str) -> Response:
    person = need(request, "manage_methods")
    from datetime import date

    from service.services import specifications as spec_uc

    engine = request.app.state.engine
    form = await request.form()
    values = {k: v for k, v in form.items() if isinstance(v, str)}
    ctx = {**_ref_context(engine, code), "values": values}
    errors: dict[str, str] = {}
    if not values.get("preparation", "").strip():
        errors["preparation"] = "choose how the reference was prepared; the sample must be prepared the same way"
    measured_on = None
    if values.get("measured_on", "").strip():
        try:
            measured_on = date.fromisoformat(values["measured_on"].strip())
        except ValueError:
            errors["measured_on"] = "write the date as YYYY-MM-DD"
    upload = form.get("file")
    data = b""
    if upload is None or isinstance(upload, str) or not getattr(upload, "filename", ""):
        errors["file"] = "choose the reference spectrum file (JCAMP-DX or delimited text)"
    else:
        data = await upload.read()
        if not data:
            errors["file"] = f"the file {upload.filename!r} is empty; export the spectrum again"
    if not errors:
        try:
            ref = spec_uc.add_reference(engine, _records.actor(person), material_code=code,
                                        preparation=values["preparation"].strip(), data=data,
                                        file_name=upload.filename or "",  # type: ignore[union-attr]
                                        instrument_code=values.get("instrument", "").strip() or None,
                                        conditions=values.get("conditions", "").strip(), measured_on=measured_on)
            return see_other(f"/references/{ref.id}")
        except BandgateError as exc:
            errors = form_errors(exc, known=REF_FIELDS)
            if list(errors) == ["_form"] and isinstance(exc, UnusableInput):
                errors = {"file": exc.message}
            ctx["message"] = exc.message
    ctx["errors"] = errors
    ctx.setdefault("message", "Nothing was saved: some fields are missing or wrong.")
    return render(request, "reference_new.html", ctx, status=422, person=person, nav="materials")
