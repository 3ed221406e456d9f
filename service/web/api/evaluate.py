"""Dry-run evaluation and library search: computed on the server, nothing recorded."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Annotated, Any

from fastapi import APIRouter, Depends, File, Form, Query, Request, UploadFile

from service import errors as e
from service.release.permissions import Action
from service.services.dry_run import evaluate_dry_run, parse_spec_text, search_library
from service.web.api.access import ApiRoute, acting_user
from service.web.auth import Principal, require_action
from service.web.api.problems import problems
from service.web.api.schemas import CAUTION, DryRunOut, LibrarySearchOut
from service.web.api.uploads import check_text, optional_text, read_upload

router = APIRouter(tags=["evaluation"], route_class=ApiRoute)


@contextmanager
def prefixed(prefix: str) -> Iterator[None]:
    """Re-raise InvalidInput with its field paths under ``prefix`` (e.g. ``spec.required_bands[2].from``)."""
    try:
        yield
    except e.InvalidInput as exc:
        exc.fields = [e.FieldProblem(f"{prefix}.{f.path}" if f.path else prefix, f.message) for f in exc.fields]
        raise


@router.post(
    "/evaluate", response_model=DryRunOut, responses=problems(400, 404, 413, 415, 422),
    summary="Evaluate a spectrum without recording anything (dry run)",
    description="Multipart: `file` (the sample spectrum) and either `spec` (the specification as JSON text) "
    "with `reference` (a spectrum file), or `material` (a code: its approved specification and reference "
    "are used, and the approved library for mix-up detection). Records nothing; for method development.",
    openapi_extra={"requestBody": {"content": {"multipart/form-data": {"example": {
        "file": "(sample spectrum)", "material": "LACT-MONO"}}}}},
)
def dry_run(
    request: Request, principal: Annotated[Principal, require_action(Action.dry_run_evaluation)],
    file: Annotated[UploadFile, File(description="the sample spectrum")],
    spec: Annotated[str | None, Form(description="specification document, JSON text")] = None,
    reference: Annotated[UploadFile | None, File(description="reference spectrum for `spec`")] = None,
    material: Annotated[str | None, Form(max_length=64, description="use this material's approved pair")] = None,
) -> dict[str, Any]:
    engine = request.app.state.engine
    check_text(material=material)
    material = optional_text(material)
    spec_text = optional_text(spec)
    if material is None and (spec_text is None or reference is None):
        raise e.InvalidInput(
            "send either `material`, or both `spec` and `reference`",
            fields=[e.FieldProblem("material", "a material code"), e.FieldProblem("spec", "or spec and reference")],
        )
    if material is not None and (spec_text is not None or reference is not None):
        raise e.InvalidInput("send `material` or `spec` with `reference`, not both",
                             fields=[e.FieldProblem("material", "leave out when sending spec and reference")])
    sample = read_upload(file, request)
    if material is not None:
        result = evaluate_dry_run(engine, data=sample.data, file_name=sample.file_name, material_code=material)
    else:
        doc = parse_spec_text(spec_text or "")
        ref = read_upload(reference, request, field="reference")  # type: ignore[arg-type]
        with prefixed("spec"):
            result = evaluate_dry_run(engine, data=sample.data, file_name=sample.file_name, spec_document=doc,
                                      reference_data=ref.data, reference_name=ref.file_name)
    doc_out = result.evaluation.as_dict()
    return {"verdict": str(result.evaluation.verdict), "criteria": doc_out.get("criteria", []),
            "evaluation": doc_out, "recorded": False, "specification": result.specification, "caution": CAUTION}


@router.post(
    "/library/search", response_model=LibrarySearchOut, responses=problems(400, 413, 415, 422),
    summary="Rank the approved references against a spectrum",
    description="Multipart `file`. Pearson correlation over the spectrum's mid-IR range against every approved "
    "reference; the best `top` matches. Records nothing. A match is a hint for an investigation, not an identity.",
    openapi_extra={"requestBody": {"content": {"multipart/form-data": {"example": {"file": "(spectrum)"}}}}},
)
def library_search(
    request: Request, principal: Annotated[Principal, require_action(Action.dry_run_evaluation)],
    file: Annotated[UploadFile, File(description="the spectrum to look up")],
    top: Annotated[int, Query(ge=1, le=50)] = 5,
) -> dict[str, Any]:
    upload = read_upload(file, request)
    count, matches = search_library(request.app.state.engine, data=upload.data, file_name=upload.file_name, top=top)
    return {"references": count, "matches": [m.as_dict() for m in matches], "caution": CAUTION}
