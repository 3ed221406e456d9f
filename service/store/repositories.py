"""Queries and inserts for the GMP records: all SQL of the record keeping lives here."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from sqlalchemy import bindparam, func
from sqlmodel import Session, col, select

from service.release.digests import sha256_hex
from service.store.tables import (
    Evaluation, Instrument, InstrumentCheck, Lot, LotContainer, LotDecision, Material, Measurement,
    MeasurementInvalidation, ReferenceSpectrum, Signature, SpecificationVersion, StoredFile, Supplier,
    SupplierApproval, User, utc_now,
)


# Frequent statements are built once, with bound parameters: building a select and computing its
# cache key costs more than running it on SQLite, and a reused statement object keeps its cache key
# (SQLAlchemy memoises it), so each call goes straight to the compiled-SQL cache. (The upload path's
# own statements are in `upload_records.py`.)
_LOT_BY_CODE = select(Lot).where(Lot.code == bindparam("code"))
_INSTRUMENT_BY_CODE = select(Instrument).where(Instrument.code == bindparam("code"))
_APPROVED_SPEC = (select(SpecificationVersion)
                  .where(SpecificationVersion.material_id == bindparam("material_id"),
                         SpecificationVersion.status == "approved")
                  .order_by(col(SpecificationVersion.version).desc()).limit(1))
_REFERENCES_BY_STATUS = (select(ReferenceSpectrum).where(ReferenceSpectrum.status == bindparam("status"))
                         .order_by(col(ReferenceSpectrum.id)))
_MATERIALS = select(Material).order_by(col(Material.code))
_INVALIDATIONS_FOR = (select(MeasurementInvalidation)
                      .where(col(MeasurementInvalidation.measurement_id).in_(bindparam("ids", expanding=True))))
_USER_BY_USERNAME = select(User).where(User.username == bindparam("username"))


def add(session: Session, row: object) -> None:
    session.add(row)
    session.flush()


def store_file(session: Session, data: bytes) -> StoredFile:
    row = StoredFile(sha256=sha256_hex(data), size=len(data), content=bytes(data), created_at=utc_now())
    add(session, row)
    return row


def file_by_id(session: Session, file_id: int) -> StoredFile | None:
    return session.get(StoredFile, file_id)


def iter_file_digests(session: Session, *, batch: int = 50):  # type: ignore[no-untyped-def]
    """(id, stored sha256, stored size, recomputed sha256, actual size) for every stored file."""
    last = 0
    while True:
        rows = session.exec(select(StoredFile).where(col(StoredFile.id) > last).order_by(col(StoredFile.id))
                            .limit(batch)).all()
        if not rows:
            return
        for r in rows:
            yield r.id, r.sha256, r.size, sha256_hex(r.content), len(r.content)
            session.expunge(r)
        last = rows[-1].id or last


def user_by_id(session: Session, user_id: int) -> User | None:
    return session.get(User, user_id)


def user_by_username(session: Session, username: str) -> User | None:
    return session.exec(_USER_BY_USERNAME, params={"username": username}).first()


def list_users(session: Session) -> list[User]:
    return list(session.exec(select(User).order_by(col(User.id))).all())


def material_by_code(session: Session, code: str) -> Material | None:
    return session.exec(select(Material).where(Material.code == code)).first()


def list_materials(session: Session) -> list[Material]:
    return list(session.exec(_MATERIALS).all())


def supplier_by_name(session: Session, name: str) -> Supplier | None:
    return session.exec(select(Supplier).where(Supplier.name == name)).first()


def list_suppliers(session: Session) -> list[Supplier]:
    return list(session.exec(select(Supplier).order_by(col(Supplier.name))).all())


def approval_for(session: Session, material_id: int, supplier_id: int) -> SupplierApproval | None:
    return session.exec(select(SupplierApproval).where(
        SupplierApproval.material_id == material_id, SupplierApproval.supplier_id == supplier_id)).first()


def approvals_for_material(session: Session, material_id: int) -> list[SupplierApproval]:
    return list(session.exec(select(SupplierApproval).where(SupplierApproval.material_id == material_id)
                             .order_by(col(SupplierApproval.id))).all())


def spec_versions(session: Session, material_id: int) -> list[SpecificationVersion]:
    return list(session.exec(select(SpecificationVersion).where(SpecificationVersion.material_id == material_id)
                             .order_by(col(SpecificationVersion.version))).all())


def approved_spec(session: Session, material_id: int) -> SpecificationVersion | None:
    return session.exec(_APPROVED_SPEC, params={"material_id": material_id}).first()


def next_spec_version(session: Session, material_id: int) -> int:
    top = session.exec(select(func.max(SpecificationVersion.version))
                       .where(SpecificationVersion.material_id == material_id)).one()
    return int(top or 0) + 1


def references(session: Session, material_id: int | None = None, status: str | None = None) -> list[ReferenceSpectrum]:
    if material_id is None and status is not None:
        return list(session.exec(_REFERENCES_BY_STATUS, params={"status": status}).all())
    q = select(ReferenceSpectrum)
    if material_id is not None:
        q = q.where(ReferenceSpectrum.material_id == material_id)
    if status is not None:
        q = q.where(ReferenceSpectrum.status == status)
    return list(session.exec(q.order_by(col(ReferenceSpectrum.id))).all())


def instrument_by_code(session: Session, code: str) -> Instrument | None:
    return session.exec(_INSTRUMENT_BY_CODE, params={"code": code}).first()


def list_instruments(session: Session) -> list[Instrument]:
    return list(session.exec(select(Instrument).order_by(col(Instrument.code))).all())


def _check_time() -> Any:
    """When a check's film was measured: the time from its file, else its recording time."""
    return func.coalesce(col(InstrumentCheck.measured_at), col(InstrumentCheck.checked_at))


def last_passing_check(session: Session, instrument_id: int) -> InstrumentCheck | None:
    return session.exec(select(InstrumentCheck).where(
        InstrumentCheck.instrument_id == instrument_id, col(InstrumentCheck.passed).is_(True))
        .order_by(_check_time().desc(), col(InstrumentCheck.id).desc())).first()


def latest_check(session: Session, instrument_id: int) -> InstrumentCheck | None:
    """The instrument's most recently measured check, passed or not (ties: the later recorded)."""
    return session.exec(select(InstrumentCheck).where(InstrumentCheck.instrument_id == instrument_id)
                        .order_by(_check_time().desc(), col(InstrumentCheck.id).desc())).first()


def checks_for(session: Session, instrument_id: int, limit: int = 50) -> list[InstrumentCheck]:
    return list(session.exec(select(InstrumentCheck).where(InstrumentCheck.instrument_id == instrument_id)
                             .order_by(col(InstrumentCheck.id).desc()).limit(limit)).all())


def lot_by_code(session: Session, code: str) -> Lot | None:
    return session.exec(_LOT_BY_CODE, params={"code": code}).first()


def count_lots_since(session: Session, since: datetime) -> int:
    return int(session.exec(select(func.count()).select_from(Lot).where(col(Lot.created_at) >= since)).one())


def count_lots_with_prefix(session: Session, prefix: str) -> int:
    return int(session.exec(select(func.count()).select_from(Lot).where(col(Lot.code).startswith(prefix))).one())


def list_lots(session: Session, *, state: str | None = None, material_id: int | None = None,
              search: str | None = None, limit: int = 50, offset: int = 0) -> tuple[list[Lot], int]:
    q = select(Lot)
    if state:
        q = q.where(Lot.state == state)
    if material_id is not None:
        q = q.where(Lot.material_id == material_id)
    if search:
        like = f"%{search}%"
        q = q.where(col(Lot.code).ilike(like) | col(Lot.supplier_lot).ilike(like))
    total = int(session.exec(select(func.count()).select_from(q.subquery())).one())
    rows = session.exec(q.order_by(col(Lot.id).desc()).offset(offset).limit(limit)).all()
    return list(rows), total


def containers(session: Session, lot_id: int) -> list[LotContainer]:
    return list(session.exec(select(LotContainer).where(LotContainer.lot_id == lot_id)
                             .order_by(col(LotContainer.number))).all())


def measurements_for_lot(session: Session, lot_id: int) -> list[Measurement]:
    return list(session.exec(select(Measurement).where(Measurement.lot_id == lot_id)
                             .order_by(col(Measurement.id))).all())


def measurement_by_id(session: Session, measurement_id: int) -> Measurement | None:
    return session.get(Measurement, measurement_id)


def evaluations_for(session: Session, measurement_ids: list[int]) -> dict[int, Evaluation]:
    if not measurement_ids:
        return {}
    rows = session.exec(select(Evaluation).where(col(Evaluation.measurement_id).in_(measurement_ids))).all()
    return {r.measurement_id: r for r in rows}


def invalidations_for(session: Session, measurement_ids: list[int]) -> dict[int, MeasurementInvalidation]:
    if not measurement_ids:
        return {}
    rows = session.exec(_INVALIDATIONS_FOR, params={"ids": list(measurement_ids)}).all()
    return {r.measurement_id: r for r in rows}


def signatures_for(session: Session, record_type: str, record_ids: list[int]) -> list[Signature]:
    if not record_ids:
        return []
    return list(session.exec(select(Signature).where(Signature.record_type == record_type,
                                                     col(Signature.record_id).in_(record_ids))
                             .order_by(col(Signature.id))).all())


def iter_signatures(session: Session) -> list[Signature]:
    return list(session.exec(select(Signature).order_by(col(Signature.id))).all())


def decision_for(session: Session, lot_id: int) -> LotDecision | None:
    return session.exec(select(LotDecision).where(LotDecision.lot_id == lot_id)).first()


def spec_by_id(session: Session, spec_id: int) -> SpecificationVersion | None:
    return session.get(SpecificationVersion, spec_id)


def reference_by_id(session: Session, ref_id: int) -> ReferenceSpectrum | None:
    return session.get(ReferenceSpectrum, ref_id)


def material_by_id(session: Session, material_id: int) -> Material | None:
    return session.get(Material, material_id)


def supplier_by_id(session: Session, supplier_id: int) -> Supplier | None:
    return session.get(Supplier, supplier_id)


def instrument_by_id(session: Session, instrument_id: int) -> Instrument | None:
    return session.get(Instrument, instrument_id)


def container_by_id(session: Session, container_id: int) -> LotContainer | None:
    return session.get(LotContainer, container_id)


def lot_by_id(session: Session, lot_id: int) -> Lot | None:
    return session.get(Lot, lot_id)




def operators_of_lot(session: Session, lot_id: int) -> set[int]:
    rows = session.exec(select(Measurement.operator_id).where(Measurement.lot_id == lot_id).distinct()).all()
    return {int(r) for r in rows}


def lot_states(session: Session) -> dict[int, tuple[str, str]]:
    """lot id -> (code, state) for every lot."""
    return {int(i): (c, st) for i, c, st in session.exec(select(Lot.id, Lot.code, Lot.state)).all()}


