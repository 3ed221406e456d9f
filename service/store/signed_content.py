"""The exact content a signature covers, per record type, rebuilt from the stored rows.

The digest of this content is stored with the signature when it is given and recomputed by
``audit verify``: a changed record shows as changed since signing, and a signature cannot be
moved to another record (the record type and id are part of the content). Mutable bookkeeping
(a lot's state, a spec's superseded status) is left out; everything a decision rests on is in.
"""

from __future__ import annotations

import json
from typing import Any

from sqlmodel import Session

from service.errors import NotFound
from service.release.digests import record_digest
from service.store import repositories as repo
from service.store.tables import Evaluation, Measurement


def _evaluation(ev: Evaluation | None) -> dict[str, Any] | None:
    if ev is None:
        return None
    return {
        "verdict": ev.verdict, "document": json.loads(ev.document), "spec_version_id": ev.spec_version_id,
        "reference_id": ev.reference_id, "software_version": ev.software_version,
    }


def _measurement(m: Measurement, ev: Evaluation | None, container_number: int) -> dict[str, Any]:
    return {
        "id": m.id, "container": container_number, "instrument_id": m.instrument_id, "operator_id": m.operator_id,
        "sha256": m.sha256, "size": m.size, "status": m.status, "reason": m.reason,
        "retest_of_id": m.retest_of_id, "evaluation": _evaluation(ev),
    }


def content_of(session: Session, record_type: str, record_id: int) -> dict[str, Any]:
    """The signed content of one record; raises NotFound for an unknown record."""
    if record_type == "specification_version":
        spec = repo.spec_by_id(session, record_id)
        if spec is None:
            raise NotFound(f"specification version {record_id} does not exist")
        mat = repo.material_by_id(session, spec.material_id)
        return {"id": spec.id, "material": mat.code if mat else None, "version": spec.version,
                "document": json.loads(spec.document)}
    if record_type == "reference_spectrum":
        ref = repo.reference_by_id(session, record_id)
        if ref is None:
            raise NotFound(f"reference spectrum {record_id} does not exist")
        mat = repo.material_by_id(session, ref.material_id)
        return {"id": ref.id, "material": mat.code if mat else None, "preparation": ref.preparation,
                "sha256": ref.sha256, "instrument_id": ref.instrument_id, "conditions": ref.conditions,
                "measured_on": ref.measured_on.isoformat() if ref.measured_on else None}
    if record_type == "measurement":
        m = repo.measurement_by_id(session, record_id)
        if m is None:
            raise NotFound(f"measurement {record_id} does not exist")
        c = repo.container_by_id(session, m.container_id)
        ev = repo.evaluations_for(session, [record_id]).get(record_id)
        return _measurement(m, ev, c.number if c else -1)
    if record_type == "lot":
        lot = repo.lot_by_id(session, record_id)
        if lot is None:
            raise NotFound(f"lot {record_id} does not exist")
        numbers = {c.id: c.number for c in repo.containers(session, lot.id)}  # type: ignore[arg-type]
        ms = repo.measurements_for_lot(session, lot.id)  # type: ignore[arg-type]
        ids = [m.id for m in ms if m.id is not None]
        evs = repo.evaluations_for(session, ids)
        invs = repo.invalidations_for(session, ids)
        return {
            "id": lot.id, "code": lot.code, "material_id": lot.material_id, "supplier_id": lot.supplier_id,
            "supplier_lot": lot.supplier_lot, "containers_received": lot.containers_received,
            "plan": json.loads(lot.plan),
            "measurements": [_measurement(m, evs.get(m.id), numbers.get(m.container_id, -1)) for m in ms],  # type: ignore[arg-type]
            "invalidated": sorted((mid, inv.cause) for mid, inv in invs.items()),
        }
    raise NotFound(f"records of type {record_type!r} cannot be signed")


def digest_of(session: Session, record_type: str, record_id: int) -> str:
    return record_digest(record_type, content_of(session, record_type, record_id))
