"""Suggest required-band rows for a new specification version from the approved reference.

A read-only use case: the approved reference of the material is read and handed to the
evaluator's ``suggest_bands`` (the reference prepared as an evaluation would prepare it, bands
found outside the preparation's exclusions, each with its group-frequency assignment from the
UCLA WebSpectra / UMass OWL tables). The strongest few become rows for the editor; a person
checks every row before saving.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.engine import Engine

from service.errors import Conflict

MAX_ROWS = 8


def suggest_from_reference(engine: Engine, material_code: str, *, lo: float | None = None,
                           hi: float | None = None) -> list[dict[str, Any]]:
    """Rows (label, from, to, min_relative_intensity, hint) from the approved reference; Conflict if none."""
    from service.evaluation.suggest import suggest_bands
    from service.services import evaluator
    from service.services import specifications as spec_uc

    refs = spec_uc.list_references(engine, material_code=material_code, status="approved")
    if not refs:
        raise Conflict(f"material {material_code} has no approved reference spectrum to suggest bands from; "
                       "upload and approve a reference first")
    ref, data = spec_uc.reference_file(engine, refs[-1].id)
    spectrum = evaluator.read_spectrum(data, file_name=ref.file_name)
    suggestions = suggest_bands(spectrum, preparation=ref.preparation, lo=lo, hi=hi)[:MAX_ROWS]
    rows = []
    for s in sorted(suggestions, key=lambda b: -b.position_cm1):
        rule = s.rule()
        hint = "; or ".join(s.assignments) if s.assignments else (
            "fingerprint region: specific to the compound" if s.position_cm1 < 1500 else "no usual assignment")
        # the label names the band, not a group: an assignment is a hint the author confirms
        rows.append({**rule, "label": f"band at {s.position_cm1:.0f}", "hint": hint})
    return rows
