"""Materials, specification versions, reference spectra, instruments and their polystyrene checks.

Create and read only: approving a specification or a reference is a signed step a person takes
in the web pages; no token can do it.
"""

from __future__ import annotations

from datetime import date
from typing import Annotated, Any

from fastapi import APIRouter, Depends, File, Form, Path, Request, UploadFile
from fastapi.responses import JSONResponse

from service import services as uc
from service.release.permissions import Action
from service.web.api.access import ApiRoute, acting_user
from service.web.auth import Principal, require_action
from service.web.api.idempotency import Answer, Write
from service.web.api.problems import WRITE, problems
from service.web.api.schemas import (
    InstrumentCheckOut, InstrumentCreate, InstrumentOut, MaterialCreate, MaterialOut, ReferenceOut,
    SpecificationCreate, SpecificationOut,
)
from service.web.api.uploads import check_text, optional_text, read_upload

router = APIRouter(route_class=ApiRoute)

Code = Annotated[str, Path(min_length=1, max_length=64, description="material or instrument code")]
RecordId = Annotated[int, Path(ge=1, le=2**31 - 1)]
Manage = Annotated[Principal, require_action(Action.manage_methods)]
Read = Annotated[Principal, require_action(Action.view_records)]


def _created(request: Request, principal: Principal, payload: dict[str, Any], make: Any, location: Any) -> JSONResponse:
    engine = request.app.state.engine
    actor = acting_user(request, principal)

    def act() -> Answer:
        view = make(engine, actor)
        return Answer(status_code=201, body=view.as_dict(), headers={"Location": location(view)})

    return Write(request, principal, payload).run(act)


# --- materials ----------------------------------------------------------------------------------

@router.post("/materials", status_code=201, response_model=MaterialOut, responses=problems(*WRITE),
             tags=["materials"], summary="Create a material", description="Honours `Idempotency-Key`.")
def create_material(body: MaterialCreate, request: Request, principal: Manage) -> JSONResponse:
    return _created(
        request, principal, body.model_dump(),
        lambda engine, actor: uc.create_material(engine, actor, code=body.code, name=body.name,
                                                 description=body.description),
        lambda v: f"/api/v1/materials/{v.code}")


@router.get("/materials", response_model=list[MaterialOut], responses=problems(), tags=["materials"],
            summary="List materials")
def list_materials(request: Request, principal: Read) -> list[dict[str, Any]]:
    return [m.as_dict() for m in uc.list_materials(request.app.state.engine)]


@router.get("/materials/{code}", response_model=MaterialOut, responses=problems(404), tags=["materials"],
            summary="Read a material")
def read_material(code: Code, request: Request, principal: Read) -> dict[str, Any]:
    return uc.get_material(request.app.state.engine, code).as_dict()


# --- specification versions -----------------------------------------------------------------------

@router.post(
    "/materials/{code}/specifications", status_code=201, response_model=SpecificationOut,
    responses=problems(404, *WRITE), tags=["specifications"], summary="Create a draft specification version",
    description="Validates the document with the evaluator (every wrong field is named, with its path under "
    "`document`) and stores it as the next draft version. Approval is a person's signed step in the web "
    "pages. Honours `Idempotency-Key`.",
)
def create_specification(code: Code, body: SpecificationCreate, request: Request, principal: Manage) -> JSONResponse:
    from service.web.api.evaluate import prefixed

    def make(engine: Any, actor: Any) -> Any:
        with prefixed("document"):
            return uc.create_spec_draft(engine, actor, material_code=code, document=body.document)

    return _created(request, principal, {"material": code, **body.model_dump()}, make,
                    lambda v: f"/api/v1/specifications/{v.id}")


@router.get("/materials/{code}/specifications", response_model=list[SpecificationOut], responses=problems(404),
            tags=["specifications"], summary="List a material's specification versions")
def list_specifications(code: Code, request: Request, principal: Read) -> list[dict[str, Any]]:
    return [s.as_dict() for s in uc.spec_versions(request.app.state.engine, code)]


@router.get("/specifications/{spec_id}", response_model=SpecificationOut, responses=problems(404),
            tags=["specifications"], summary="Read a specification version")
def read_specification(spec_id: RecordId, request: Request, principal: Read) -> dict[str, Any]:
    return uc.get_spec_version(request.app.state.engine, spec_id).as_dict()


# --- reference spectra ------------------------------------------------------------------------------

@router.post(
    "/materials/{code}/references", status_code=201, response_model=ReferenceOut, responses=problems(404, *WRITE),
    tags=["references"], summary="Add a reference spectrum (draft)",
    description="Multipart: `file` (must be readable), `preparation` (e.g. atr), optional `instrument`, "
    "`conditions`, `measured_on`. Stored unchanged with its SHA-256 as a draft; approval is a person's "
    "signed step. Honours `Idempotency-Key`.",
    openapi_extra={"requestBody": {"content": {"multipart/form-data": {"example": {
        "preparation": "atr", "instrument": "FTIR-02", "conditions": "4 cm-1, 32 scans", "measured_on": "2026-11-28",
        "file": "(the reference spectrum, JCAMP-DX or CSV)"}}}}},
)
def add_reference(
    code: Code, request: Request, principal: Manage,
    file: Annotated[UploadFile, File(description="the reference spectrum")],
    preparation: Annotated[str, Form(min_length=1, max_length=64)],
    instrument: Annotated[str | None, Form(max_length=64)] = None,
    conditions: Annotated[str, Form(max_length=2000)] = "",
    measured_on: Annotated[date | None, Form()] = None,
) -> JSONResponse:
    check_text(preparation=preparation, instrument=instrument, conditions=conditions)
    upload = read_upload(file, request)
    payload = {"material": code, "preparation": preparation, "instrument": instrument, "conditions": conditions,
               "measured_on": measured_on, "file_sha256": upload.sha256}
    return _created(
        request, principal, payload,
        lambda engine, actor: uc.add_reference(
            engine, actor, material_code=code, preparation=preparation, data=upload.data,
            file_name=upload.file_name, instrument_code=optional_text(instrument), conditions=conditions,
            measured_on=measured_on),
        lambda v: f"/api/v1/references/{v.id}")


@router.get("/materials/{code}/references", response_model=list[ReferenceOut], responses=problems(404),
            tags=["references"], summary="List a material's reference spectra")
def list_references(code: Code, request: Request, principal: Read) -> list[dict[str, Any]]:
    return [r.as_dict() for r in uc.list_references(request.app.state.engine, material_code=code)]


@router.get("/references/{reference_id}", response_model=ReferenceOut, responses=problems(404),
            tags=["references"], summary="Read a reference spectrum's record")
def read_reference(reference_id: RecordId, request: Request, principal: Read) -> dict[str, Any]:
    view, _data = uc.reference_file(request.app.state.engine, reference_id)
    return view.as_dict()


# --- instruments and polystyrene checks ----------------------------------------------------------------

@router.post("/instruments", status_code=201, response_model=InstrumentOut, responses=problems(*WRITE),
             tags=["instruments"], summary="Register an instrument", description="Honours `Idempotency-Key`.")
def create_instrument(body: InstrumentCreate, request: Request, principal: Manage) -> JSONResponse:
    days = request.app.state.settings.instrument_check_days
    return _created(
        request, principal, body.model_dump(),
        lambda engine, actor: uc.register_instrument(engine, actor, code=body.code, kind=body.kind,
                                                     location=body.location, check_days=days),
        lambda v: f"/api/v1/instruments/{v.code}")


@router.get("/instruments", response_model=list[InstrumentOut], responses=problems(), tags=["instruments"],
            summary="List instruments with their qualification")
def list_instruments(request: Request, principal: Read) -> list[dict[str, Any]]:
    days = request.app.state.settings.instrument_check_days
    return [i.as_dict() for i in uc.list_instruments(request.app.state.engine, check_days=days)]


@router.get("/instruments/{code}", response_model=InstrumentOut, responses=problems(404), tags=["instruments"],
            summary="Read an instrument and its qualification")
def read_instrument(code: Code, request: Request, principal: Read) -> dict[str, Any]:
    days = request.app.state.settings.instrument_check_days
    return uc.get_instrument(request.app.state.engine, code, check_days=days).as_dict()


@router.post(
    "/instruments/{code}/checks", status_code=201, response_model=InstrumentCheckOut,
    responses=problems(404, *WRITE), tags=["instruments"], summary="Record a polystyrene check",
    description="Multipart `file`: the polystyrene film spectrum. The check runs on the server and is kept "
    "with the file whatever the result (an unreadable file is kept as a failed check, with the reason). "
    "The time the film was measured is taken from the file when it carries one (JCAMP-DX `##LONGDATE`, or "
    "`##DATE`/`##TIME`; no UTC offset = UTC) and qualification counts from it; a file time more than 5 minutes "
    "in the future or more than 30 days before the upload is refused with 422 and nothing is stored. "
    "Honours `Idempotency-Key`.",
    openapi_extra={"requestBody": {"content": {"multipart/form-data": {"example": {
        "file": "(polystyrene film spectrum, JCAMP-DX or CSV)"}}}}},
)
def record_check(
    code: Code, request: Request,
    principal: Annotated[Principal, require_action(Action.record_instrument_check)],
    file: Annotated[UploadFile, File(description="polystyrene film spectrum")],
) -> JSONResponse:
    upload = read_upload(file, request)
    return _created(
        request, principal, {"instrument": code, "file_sha256": upload.sha256},
        lambda engine, actor: uc.record_instrument_check(engine, actor, instrument_code=code, data=upload.data,
                                                         file_name=upload.file_name),
        lambda v: f"/api/v1/instruments/{code}/checks")


@router.get("/instruments/{code}/checks", response_model=list[InstrumentCheckOut], responses=problems(404),
            tags=["instruments"], summary="List an instrument's polystyrene checks, newest first")
def list_checks(code: Code, request: Request, principal: Read) -> list[dict[str, Any]]:
    return [c.as_dict() for c in uc.instrument_checks(request.app.state.engine, code)]
