"""Use cases for specification versions and reference spectra: draft -> approved (signed) -> superseded.

An approved version never changes: a change is a new version. Approving a version supersedes the
one approved before it (per material; for references, per material and preparation). Only the
approved version is used to evaluate, and each evaluation records the version it used.
"""

from __future__ import annotations

import json
from datetime import date
from typing import Any

from sqlalchemy.engine import Engine
from sqlmodel import Session

from service.errors import Conflict, FieldProblem, InvalidInput, NotFound
from service.release.actor import Actor
from service.release.digests import canonical_json
from service.release.signing import Meaning
from service.store import repositories as repo
from service.store.tables import ReferenceSpectrum, SpecificationVersion, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services import evaluator
from service.services.views import ReferenceView, SignatureView, SpecVersionView, utc

DRAFT, APPROVED, SUPERSEDED = "draft", "approved", "superseded"


def _spec_view(session: Session, s: SpecificationVersion) -> SpecVersionView:
    m = repo.material_by_id(session, s.material_id)
    return SpecVersionView(id=s.id or 0, material=m.code if m else "?", version=s.version, status=s.status,
                           document=json.loads(s.document), created_at=utc(s.created_at) or s.created_at,
                           created_by=s.created_by, approved_at=utc(s.approved_at), approved_by=s.approved_by)


def create_spec_draft(engine: Engine, actor: Actor, *, material_code: str, document: dict[str, Any]) -> SpecVersionView:
    """Validate the document with the evaluator's parser and store it as the next draft version."""
    if not isinstance(document, dict):
        raise InvalidInput("the specification must be a JSON object", fields=[FieldProblem("spec", "send a JSON object")])
    evaluator.parse_specification(document)  # raises InvalidInput naming every wrong field
    if document.get("material") != material_code:
        raise InvalidInput(f"the specification names material {document.get('material')!r} but is filed under "
                           f"{material_code!r}", fields=[FieldProblem("material", f"set it to {material_code!r}")])
    with UnitOfWork(engine) as uow:
        m = sh.material(uow.session, material_code)
        version = repo.next_spec_version(uow.session, m.id)  # type: ignore[arg-type]
        document = {**document, "version": version}  # the record's version number is assigned here
        s = SpecificationVersion(material_id=m.id, version=version, status=DRAFT, document=canonical_json(document),
                                 created_at=utc_now(), created_by=actor.user_id)
        repo.add(uow.session, s)
        sh.audit(uow.session, actor, "specification.drafted", "specification_version", s.id,
                 new={"material": m.code, "version": version, "status": DRAFT, "document": document})
        uow.commit()
        return _spec_view(uow.session, s)


def approve_spec_version(engine: Engine, actor: Actor, *, spec_version_id: int, reason: str = "") -> SpecVersionView:
    """Approve a draft (a signed step); the previously approved version becomes superseded."""
    with UnitOfWork(engine) as uow:
        s = sh.spec(uow.session, spec_version_id)
        if s.status != DRAFT:
            raise Conflict(f"specification version {s.version} is {s.status}; only a draft can be approved")
        m = repo.material_by_id(uow.session, s.material_id)
        previous = repo.approved_spec(uow.session, s.material_id)
        _approve_draft(uow.session, actor, s, record_type="specification_version", action="specification",
                       superseded=[previous] if previous is not None else [],
                       superseded_because=f"superseded by version {s.version}", reason=reason,
                       also_recorded={"material": m.code if m else None, "version": s.version})
        uow.commit()
        return _spec_view(uow.session, s)


def spec_versions(engine: Engine, material_code: str) -> list[SpecVersionView]:
    with UnitOfWork(engine, write=False) as uow:
        m = sh.material(uow.session, material_code)
        return [_spec_view(uow.session, s) for s in repo.spec_versions(uow.session, m.id)]  # type: ignore[arg-type]


def get_spec_version(engine: Engine, spec_version_id: int) -> SpecVersionView:
    with UnitOfWork(engine, write=False) as uow:
        return _spec_view(uow.session, sh.spec(uow.session, spec_version_id))


def effective_spec(engine: Engine, material_code: str) -> SpecVersionView:
    with UnitOfWork(engine, write=False) as uow:
        m = sh.material(uow.session, material_code)
        s = repo.approved_spec(uow.session, m.id)  # type: ignore[arg-type]
        if s is None:
            raise NotFound(f"material {m.code} has no approved specification; approve a version first")
        return _spec_view(uow.session, s)


def _ref_view(session: Session, r: ReferenceSpectrum) -> ReferenceView:
    m = repo.material_by_id(session, r.material_id)
    f = repo.file_by_id(session, r.file_id)
    inst = repo.instrument_by_id(session, r.instrument_id) if r.instrument_id else None
    return ReferenceView(id=r.id or 0, material=m.code if m else "?", preparation=r.preparation,
                         file_name=r.file_name, sha256=r.sha256, size=f.size if f else 0,
                         instrument=inst.code if inst else None, conditions=r.conditions, measured_on=r.measured_on,
                         status=r.status, created_at=utc(r.created_at) or r.created_at,
                         approved_at=utc(r.approved_at), approved_by=r.approved_by)


def add_reference(engine: Engine, actor: Actor, *, material_code: str, preparation: str, data: bytes,
                  file_name: str = "", instrument_code: str | None = None, conditions: str = "",
                  measured_on: date | None = None) -> ReferenceView:
    """Store a reference spectrum (raw file unchanged) as a draft; the file must be readable."""
    preparation = sh.require_text(preparation, "preparation", "the preparation (e.g. atr-diamond)", max_len=64)
    known = evaluator.known_preparations()
    if preparation not in known:
        raise InvalidInput(f"unknown preparation {preparation!r}",
                           fields=[FieldProblem("preparation", "use one of " + ", ".join(known))])
    evaluator.read_spectrum(bytes(data), file_name=file_name)  # refuse an unreadable reference outright
    with UnitOfWork(engine) as uow:
        m = sh.material(uow.session, material_code)
        inst = sh.instrument(uow.session, instrument_code) if instrument_code else None
        stored = repo.store_file(uow.session, bytes(data))
        r = ReferenceSpectrum(material_id=m.id, preparation=preparation, file_id=stored.id,
                              file_name=(file_name or "")[:255], sha256=stored.sha256,
                              instrument_id=inst.id if inst else None, conditions=(conditions or "").strip(),
                              measured_on=measured_on, status=DRAFT, created_at=utc_now(), created_by=actor.user_id)
        repo.add(uow.session, r)
        sh.audit(uow.session, actor, "reference.added", "reference_spectrum", r.id,
                 new={"material": m.code, "preparation": preparation, "sha256": stored.sha256, "size": stored.size,
                      "file_name": r.file_name, "instrument": inst.code if inst else None,
                      "conditions": r.conditions, "measured_on": measured_on, "status": DRAFT})
        uow.commit()
        return _ref_view(uow.session, r)


def approve_reference(engine: Engine, actor: Actor, *, reference_id: int, reason: str = "") -> ReferenceView:
    with UnitOfWork(engine) as uow:
        r = repo.reference_by_id(uow.session, reference_id)
        if r is None:
            raise NotFound(f"no reference spectrum with id {reference_id}")
        if r.status != DRAFT:
            raise Conflict(f"reference {reference_id} is {r.status}; only a draft can be approved")
        same_preparation = [old for old in repo.references(uow.session, r.material_id, APPROVED)
                            if old.preparation == r.preparation]
        _approve_draft(uow.session, actor, r, record_type="reference_spectrum", action="reference",
                       superseded=same_preparation, superseded_because=f"superseded by reference {r.id}",
                       reason=reason)
        uow.commit()
        return _ref_view(uow.session, r)


def list_references(engine: Engine, *, material_code: str | None = None,
                    status: str | None = None) -> list[ReferenceView]:
    with UnitOfWork(engine, write=False) as uow:
        mid = sh.material(uow.session, material_code).id if material_code else None
        return [_ref_view(uow.session, r) for r in repo.references(uow.session, mid, status)]


def reference_file(engine: Engine, reference_id: int) -> tuple[ReferenceView, bytes]:
    with UnitOfWork(engine, write=False) as uow:
        r = repo.reference_by_id(uow.session, reference_id)
        if r is None:
            raise NotFound(f"no reference spectrum with id {reference_id}")
        f = repo.file_by_id(uow.session, r.file_id)
        return _ref_view(uow.session, r), bytes(f.content) if f else b""


def signatures(engine: Engine, record_type: str, record_id: int) -> list[SignatureView]:
    with UnitOfWork(engine, write=False) as uow:
        return [sh.signature_view(s) for s in repo.signatures_for(uow.session, record_type, [record_id])]


def _approve_draft(session: Session, actor: Actor, record: SpecificationVersion | ReferenceSpectrum, *,
                   record_type: str, action: str, superseded: list[Any], superseded_because: str,
                   reason: str, also_recorded: dict[str, Any] | None = None) -> None:
    """Supersede the versions it replaces, sign the approval and mark the draft approved, each audited."""
    for old in superseded:
        old.status = SUPERSEDED
        session.add(old)
        sh.audit(session, actor, f"{action}.superseded", record_type, old.id,
                 old={"status": APPROVED}, new={"status": SUPERSEDED}, reason=superseded_because)
    sig = sh.sign(session, actor, record_type=record_type, record_id=record.id,  # type: ignore[arg-type]
                  meaning=Meaning.approved, reason=reason)
    record.status, record.approved_at, record.approved_by = APPROVED, sig.signed_at, actor.user_id
    session.add(record)
    sh.audit(session, actor, f"{action}.approved", record_type, record.id,
             old={"status": DRAFT}, new={"status": APPROVED, "signature_id": sig.id, **(also_recorded or {})},
             reason=reason)
