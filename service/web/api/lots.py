"""Lots and their measurements: receive a lot, upload a container's spectrum, read the result."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, File, Form, Path, Query, Request, UploadFile
from fastapi.responses import JSONResponse

from service import errors as e
from service import services as uc
from service.release.permissions import Action
from service.services.notices import EVENTS as NOTICE_EVENTS
from service.web.api.access import ApiRoute, acting_user
from service.web.auth import Principal, require_action
from service.web.api.idempotency import Answer, Write
from service.web.api.problems import WRITE, problems
from service.web.api.schemas import CAUTION, LOT_CREATE_EXAMPLE, LotCreate, LotOut, LotSummary, MeasurementOut, Page
from service.web.api.uploads import check_text, read_upload
from service.web.errors import PROBLEM_BASE
from service.web.work_placement import run_database_work

router = APIRouter(tags=["lots"], route_class=ApiRoute)


def lot_body(view: Any) -> dict[str, Any]:
    return {**view.as_dict(), "caution": CAUTION}


def measurement_body(view: Any, *, lot_state: str | None = None) -> dict[str, Any]:
    body = view.as_dict()
    ev = body.get("evaluation")
    if ev is not None:
        ev["criteria"] = ev.get("document", {}).get("criteria", [])
    body["lot_state"] = lot_state
    return body


@router.post(
    "/lots", status_code=201, response_model=LotOut, responses=problems(404, *WRITE),
    summary="Receive a lot",
    description="Receive a lot into quarantine: the sampling plan is computed and stored and the containers "
    "listed. The supplier must be approved for the material. Honours `Idempotency-Key`.",
    openapi_extra={"requestBody": {"content": {"application/json": {"example": LOT_CREATE_EXAMPLE}}}},
)
def create_lot(
    body: LotCreate, request: Request, principal: Annotated[Principal, require_action(Action.receive_lot)],
) -> JSONResponse:
    engine = request.app.state.engine
    actor = acting_user(request, principal)

    def act() -> Answer:
        view = uc.receive_lot(engine, actor, material_code=body.material, supplier_name=body.supplier,
                              supplier_lot=body.supplier_lot, containers=body.containers,
                              received_on=body.received_on, retest_on=body.retest_on)
        return Answer(status_code=201, body=lot_body(view), headers={"Location": f"/api/v1/lots/{view.code}"})

    return Write(request, principal, body.model_dump(mode="json")).run(act)


@router.get(
    "/lots", response_model=Page[LotSummary], responses=problems(404, 422),
    summary="List lots", description="Lots, newest first, optionally by state and material; paginated.",
)
def list_lots(
    request: Request, principal: Annotated[Principal, require_action(Action.view_records)],
    state: Annotated[str | None, Query(description="e.g. quarantine, testing, awaiting_disposition",
                                       examples=["testing"])] = None,
    material: Annotated[str | None, Query(description="material code", examples=["LACT-MONO"])] = None,
    limit: Annotated[int, Query(ge=1, le=200)] = 50,
    offset: Annotated[int, Query(ge=0, le=10_000_000)] = 0,
) -> dict[str, Any]:
    views, total = uc.list_lots(request.app.state.engine, state=state, material_code=material, limit=limit,
                                offset=offset)
    nxt = offset + len(views)
    return {"items": [v.as_dict() for v in views], "total": total, "limit": limit, "offset": offset,
            "next_offset": nxt if nxt < total else None}


@router.get(
    "/lots/{code}", response_model=LotOut, responses=problems(404),
    summary="Read a lot", description="State, sampling plan, containers, measurements with verdicts, signatures.",
)
def read_lot(code: str, request: Request,
             principal: Annotated[Principal, require_action(Action.view_records)]) -> dict[str, Any]:
    return lot_body(uc.get_lot(request.app.state.engine, code))


MEASUREMENT_FORM_EXAMPLE = {"container": 1, "instrument": "FTIR-02", "operator": "tech1",
                            "file": "(the spectrum file: JCAMP-DX or CSV)"}


@router.post(
    "/lots/{code}/measurements", status_code=201, response_model=MeasurementOut, responses=problems(404, *WRITE),
    summary="Upload a container's spectrum",
    description="Multipart upload of one spectrum for one container. The bytes are kept unchanged with their "
    "SHA-256 whatever happens. A readable spectrum is evaluated against the material's approved "
    "specification and reference (`201`, with the verdict and criteria). An unreadable file is recorded as "
    "an unreadable measurement and answered `422` with the reader's message; an upload the lot cannot take "
    "(closed lot, container outside the plan or already tested, instrument not qualified) is recorded as "
    "refused and answered `409`. Both problem answers carry the stored `measurement`. Honours `Idempotency-Key`.",
    openapi_extra={"requestBody": {"content": {"multipart/form-data": {"example": MEASUREMENT_FORM_EXAMPLE}}}},
)
async def upload_measurement(
    code: str, request: Request,
    principal: Annotated[Principal, require_action(Action.record_measurement)],
    file: Annotated[UploadFile, File(description="the spectrum (JCAMP-DX or CSV)")],
    container: Annotated[int, Form(ge=1, le=10_000, description="container number in the lot")],
    instrument: Annotated[str, Form(min_length=1, max_length=64, description="instrument identifier")],
    operator: Annotated[str, Form(min_length=1, max_length=64, description="username of the person who measured")],
) -> JSONResponse:
    engine = request.app.state.engine
    check_text(instrument=instrument, operator=operator)
    upload = read_upload(file, request)
    actor = uc.NamedOperator(operator)  # checked inside the use case's own transaction
    settings = request.app.state.settings

    def payload() -> dict[str, Any]:  # the request's identity for an Idempotency-Key
        return {"container": container, "instrument": instrument, "operator": operator,
                "file_sha256": upload.sha256, "file_name": upload.file_name}

    def act() -> Answer:
        try:
            view, lot_state = uc.record_measurement_with_state(engine, actor, lot_code=code, container=container,
                                                               instrument_code=instrument, data=upload.data,
                                                               file_name=upload.file_name,
                                                               check_days=settings.instrument_check_days)
        except uc.UploadUnreadable as exc:
            return _recorded_problem(request, exc, 422)
        except uc.MeasurementRefused as exc:
            return _recorded_problem(request, exc, 409)
        except e.NotFound as exc:
            if any(f.path == "container" for f in exc.fields):
                raise e.InvalidInput(exc.message, fields=exc.fields) from None
            raise
        dispatcher = getattr(request.app.state, "notices", None)
        if dispatcher is not None and lot_state in NOTICE_EVENTS:
            dispatcher.wake()  # a decision may be due to a client: send it now rather than at the next tick
        return Answer(status_code=201, body=measurement_body(view, lot_state=lot_state),
                      headers={"Location": f"/api/v1/measurements/{view.id}"})

    write = Write(request, principal, payload)
    return await run_database_work(engine, lambda: write.run(act), payload_bytes=len(upload.data))


def _recorded_problem(request: Request, exc: Any, status: int) -> Answer:
    body = {
        "type": PROBLEM_BASE + exc.code, "title": exc.title, "status": status, "detail": exc.message,
        "instance": request.url.path, "measurement": measurement_body(exc.measurement),
    }
    return Answer(status_code=status, body=body, recorded=True)


@router.get(
    "/measurements/{measurement_id}", response_model=MeasurementOut, responses=problems(404),
    summary="Read a measurement", description="One measurement with its evaluation and any signatures.",
)
def read_measurement(measurement_id: Annotated[int, Path(ge=1, le=2**31 - 1)], request: Request,
                     principal: Annotated[Principal, require_action(Action.view_records)]) -> dict[str, Any]:
    return measurement_body(uc.get_measurement(request.app.state.engine, measurement_id))
