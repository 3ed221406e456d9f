"""Evaluate without recording: method development and library look-ups for the API.

Nothing here writes to the database. The library of approved references is built once per set of
approved references (keyed by their ids and SHA-256) and reused until that set changes.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from sqlalchemy.engine import Engine

from service.errors import FieldProblem, InvalidInput, UnusableInput
from service.services import evaluator
from service.services.specifications import effective_spec, list_references, reference_file



@dataclass(frozen=True, kw_only=True)
class DryRun:
    evaluation: Any  # service.evaluation.Evaluation
    specification: str  # which specification was used, in words


def approved_library(engine: Engine) -> Any:
    """The `ReferenceLibrary` of every approved reference spectrum (cached while the set is unchanged)."""
    refs = list_references(engine, status="approved")
    entries = sorted((r.id, r.material, r.sha256) for r in refs)

    def load(reference_id: int) -> tuple[bytes, str]:
        view, data = reference_file(engine, reference_id)
        return data, view.file_name

    return evaluator.library_for(entries, load)


def _read(data: bytes, file_name: str, field: str) -> Any:
    try:
        return evaluator.read_spectrum(data, file_name=file_name)
    except UnusableInput as exc:
        raise type(exc)(exc.message, fields=[FieldProblem(field, exc.message)]) from None


def evaluate_dry_run(
    engine: Engine, *, data: bytes, file_name: str = "", material_code: str | None = None,
    spec_document: dict[str, Any] | None = None, reference_data: bytes | None = None, reference_name: str = "",
) -> DryRun:
    """Evaluate a spectrum against a given spec and reference, or a material's approved pair."""
    sample = _read(data, file_name, "file")
    if material_code is not None:
        spec_view = effective_spec(engine, material_code)
        spec = evaluator.parse_specification(spec_view.document)
        prep = spec_view.document.get("preparation")
        prep = prep if isinstance(prep, str) else (prep or {}).get("method")
        refs = list_references(engine, material_code=material_code, status="approved")
        chosen = next((r for r in refs if r.preparation == prep), refs[0] if refs else None)
        if chosen is None:
            raise InvalidInput(f"material {material_code} has no approved reference spectrum; send `spec` and "
                               "`reference` instead, or approve a reference first",
                               fields=[FieldProblem("material", "a material with an approved reference")])
        _view, ref_bytes = reference_file(engine, chosen.id)
        reference = evaluator.reference_spectrum(chosen.sha256, lambda: (ref_bytes, chosen.file_name))
        used = f"{spec_view.material} version {spec_view.version} (approved), reference {chosen.id}"
        library = approved_library(engine)
        ref_prep: str | None = chosen.preparation
    else:
        assert spec_document is not None and reference_data is not None
        spec = evaluator.parse_specification(spec_document)
        reference = _read(reference_data, reference_name, "reference")
        used = "the specification and reference sent with the request"
        library, ref_prep = None, None
    return DryRun(evaluation=evaluator.evaluate(sample=sample, spec=spec, reference=reference, library=library,
                                                reference_preparation=ref_prep),
                  specification=used)


def search_library(engine: Engine, *, data: bytes, file_name: str = "", top: int = 5) -> tuple[int, list[Any]]:
    """Rank the approved references against a spectrum; returns (references searched, matches)."""
    from service.evaluation import Method

    sample = _read(data, file_name, "file")
    library = approved_library(engine)
    if library is None:
        return 0, []
    lo, hi = sample.range_cm1
    lo, hi = max(float(lo), 650.0), min(float(hi), 4000.0)
    if hi - lo < 200:
        raise InvalidInput(f"the spectrum covers {lo:.0f}-{hi:.0f} cm-1; a library search needs at least 200 cm-1 "
                           "within 650-4000 cm-1", fields=[FieldProblem("file", "a mid-IR spectrum")])
    method = Method(lo=float(int(lo) + 1), hi=float(int(hi)))
    return len(library), library.search(sample, top=top, method=method)


def parse_spec_text(text: str) -> dict[str, Any]:
    """The `spec` form field: a JSON object, or a 422 naming the position of the JSON error."""
    try:
        doc = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InvalidInput(f"the spec field is not valid JSON: {exc.msg} at line {exc.lineno} column {exc.colno}",
                           fields=[FieldProblem("spec", "send the specification as a JSON object")]) from None
    if not isinstance(doc, dict):
        raise InvalidInput("the spec field must be a JSON object", fields=[FieldProblem("spec", "a JSON object")])
    return doc
