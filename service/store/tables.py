"""SQLModel tables of the GMP records. Migration 0002 creates them; tests compare the two.

Append-only tables (refused UPDATE/DELETE by database triggers): stored_files, measurements,
evaluations, measurement_invalidations, instrument_checks, signatures, lot_decisions,
audit_events. A correction is a new row pointing to the old one.
"""

from __future__ import annotations

from datetime import date, datetime, timezone
from typing import Any

from sqlalchemy import Boolean, Column, Date, DateTime, ForeignKey, Index, Integer, LargeBinary, String, Text, UniqueConstraint
from sqlmodel import Field, SQLModel

APPEND_ONLY_TABLES = (
    "stored_files", "measurements", "evaluations", "measurement_invalidations", "instrument_checks",
    "signatures", "lot_decisions", "audit_events",
)


def utc_now() -> datetime:
    return datetime.now(timezone.utc)


def _ts(nullable: bool = False) -> Any:
    return Field(default=None, sa_column=Column(DateTime(timezone=True), nullable=nullable))


def _fk(target: str, nullable: bool = False, index: bool = True) -> Any:
    return Field(default=None, sa_column=Column(Integer, ForeignKey(target), nullable=nullable, index=index))


def _text(nullable: bool = False) -> Any:
    return Field(default=None, sa_column=Column(Text, nullable=nullable))


class User(SQLModel, table=True):
    __tablename__ = "users"
    __table_args__ = {"sqlite_autoincrement": True}  # a user id is never reused
    id: int | None = Field(default=None, primary_key=True)
    username: str = Field(sa_column=Column(String(64), nullable=False, unique=True))
    printed_name: str = Field(sa_column=Column(String(200), nullable=False))
    roles: str = Field(default="", sa_column=Column(Text, nullable=False))  # comma-separated role names
    active: bool = Field(default=True, sa_column=Column(Boolean, nullable=False))
    created_at: datetime = _ts()


class StoredFile(SQLModel, table=True):
    """The original bytes of an uploaded file, exactly as received, with their SHA-256."""

    __tablename__ = "stored_files"
    id: int | None = Field(default=None, primary_key=True)
    sha256: str = Field(sa_column=Column(String(64), nullable=False, index=True))
    size: int = Field(sa_column=Column(Integer, nullable=False))
    content: bytes = Field(sa_column=Column(LargeBinary, nullable=False))
    created_at: datetime = _ts()


class Material(SQLModel, table=True):
    __tablename__ = "materials"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(sa_column=Column(String(64), nullable=False, unique=True))
    name: str = Field(sa_column=Column(String(200), nullable=False))
    description: str = Field(default="", sa_column=Column(Text, nullable=False))
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)


class Supplier(SQLModel, table=True):
    __tablename__ = "suppliers"
    id: int | None = Field(default=None, primary_key=True)
    name: str = Field(sa_column=Column(String(200), nullable=False, unique=True))
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)


class SupplierApproval(SQLModel, table=True):
    """A supplier approved for a material; ``reduced_plan`` allows sampling fewer than all containers."""

    __tablename__ = "supplier_approvals"
    __table_args__ = (UniqueConstraint("material_id", "supplier_id", name="uq_supplier_approval"),)
    id: int | None = Field(default=None, primary_key=True)
    material_id: int = _fk("materials.id")
    supplier_id: int = _fk("suppliers.id")
    reduced_plan: bool = Field(default=False, sa_column=Column(Boolean, nullable=False))
    active: bool = Field(default=True, sa_column=Column(Boolean, nullable=False))
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)


class SpecificationVersion(SQLModel, table=True):
    __tablename__ = "specification_versions"
    __table_args__ = (UniqueConstraint("material_id", "version", name="uq_spec_version"),)
    id: int | None = Field(default=None, primary_key=True)
    material_id: int = _fk("materials.id")
    version: int = Field(sa_column=Column(Integer, nullable=False))
    status: str = Field(sa_column=Column(String(16), nullable=False))  # draft | approved | superseded
    document: str = _text()  # canonical JSON of the specification document
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)
    approved_at: datetime | None = _ts(nullable=True)
    approved_by: int | None = _fk("users.id", nullable=True, index=False)


class Instrument(SQLModel, table=True):
    __tablename__ = "instruments"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(sa_column=Column(String(64), nullable=False, unique=True))
    kind: str = Field(sa_column=Column(String(200), nullable=False))
    location: str = Field(default="", sa_column=Column(String(200), nullable=False))
    active: bool = Field(default=True, sa_column=Column(Boolean, nullable=False))
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)


class InstrumentCheck(SQLModel, table=True):
    """A polystyrene film check of an instrument with its result (Ph. Eur. 2.2.24)."""

    __tablename__ = "instrument_checks"
    id: int | None = Field(default=None, primary_key=True)
    instrument_id: int = _fk("instruments.id")
    file_id: int = _fk("stored_files.id", index=False)
    file_name: str = Field(default="", sa_column=Column(String(255), nullable=False))
    passed: bool = Field(sa_column=Column(Boolean, nullable=False))
    result: str = _text()  # JSON of the check items
    checked_at: datetime = _ts()  # the server's recording time (the audit time)
    checked_by: int = _fk("users.id", index=False)
    measured_at: datetime | None = _ts(nullable=True)  # the film's measurement time from the file; NULL = checked_at


class ReferenceSpectrum(SQLModel, table=True):
    __tablename__ = "reference_spectra"
    id: int | None = Field(default=None, primary_key=True)
    material_id: int = _fk("materials.id")
    preparation: str = Field(sa_column=Column(String(64), nullable=False))
    file_id: int = _fk("stored_files.id", index=False)
    file_name: str = Field(default="", sa_column=Column(String(255), nullable=False))
    sha256: str = Field(sa_column=Column(String(64), nullable=False))
    instrument_id: int | None = _fk("instruments.id", nullable=True, index=False)
    conditions: str = Field(default="", sa_column=Column(Text, nullable=False))
    measured_on: date | None = Field(default=None, sa_column=Column(Date, nullable=True))
    status: str = Field(sa_column=Column(String(16), nullable=False))  # draft | approved | superseded
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)
    approved_at: datetime | None = _ts(nullable=True)
    approved_by: int | None = _fk("users.id", nullable=True, index=False)


class Lot(SQLModel, table=True):
    __tablename__ = "lots"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(sa_column=Column(String(32), nullable=False, unique=True))
    material_id: int = _fk("materials.id")
    supplier_id: int = _fk("suppliers.id")
    supplier_lot: str = Field(sa_column=Column(String(100), nullable=False))
    containers_received: int = Field(sa_column=Column(Integer, nullable=False))
    received_on: date = Field(sa_column=Column(Date, nullable=False))
    retest_on: date | None = Field(default=None, sa_column=Column(Date, nullable=True))
    state: str = Field(sa_column=Column(String(32), nullable=False, index=True))
    plan: str = _text()  # JSON of the sampling plan
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)
    state_changed_at: datetime = _ts()


class LotContainer(SQLModel, table=True):
    __tablename__ = "lot_containers"
    __table_args__ = (UniqueConstraint("lot_id", "number", name="uq_lot_container"),)
    id: int | None = Field(default=None, primary_key=True)
    lot_id: int = _fk("lots.id")
    number: int = Field(sa_column=Column(Integer, nullable=False))
    selected: bool = Field(sa_column=Column(Boolean, nullable=False))  # in the sampling plan
    sampled: bool = Field(default=False, sa_column=Column(Boolean, nullable=False))
    sampled_at: datetime | None = _ts(nullable=True)


class Measurement(SQLModel, table=True):
    """One uploaded spectrum, kept whatever became of it (accepted, unreadable or refused)."""

    __tablename__ = "measurements"
    id: int | None = Field(default=None, primary_key=True)
    lot_id: int = _fk("lots.id")
    container_id: int = _fk("lot_containers.id")
    instrument_id: int = _fk("instruments.id", index=False)
    operator_id: int = _fk("users.id")
    file_id: int = _fk("stored_files.id", index=False)
    sha256: str = Field(sa_column=Column(String(64), nullable=False))
    size: int = Field(sa_column=Column(Integer, nullable=False))
    file_name: str = Field(default="", sa_column=Column(String(255), nullable=False))  # metadata only
    received_at: datetime = _ts()
    status: str = Field(sa_column=Column(String(16), nullable=False))  # accepted | unreadable | refused
    reason: str = Field(default="", sa_column=Column(Text, nullable=False))
    retest_of_id: int | None = _fk("measurements.id", nullable=True, index=False)


class Evaluation(SQLModel, table=True):
    __tablename__ = "evaluations"
    id: int | None = Field(default=None, primary_key=True)
    measurement_id: int = Field(sa_column=Column(Integer, ForeignKey("measurements.id"), nullable=False, unique=True))
    verdict: str = Field(sa_column=Column(String(16), nullable=False))  # pass | fail | invalid
    document: str = _text()  # the evaluator's as_dict(), canonical JSON
    spec_version_id: int = _fk("specification_versions.id", index=False)
    reference_id: int = _fk("reference_spectra.id", index=False)
    software_version: str = Field(sa_column=Column(String(64), nullable=False))
    created_at: datetime = _ts()


class Signature(SQLModel, table=True):
    __tablename__ = "signatures"
    __table_args__ = (Index("ix_signature_record", "record_type", "record_id"),)
    id: int | None = Field(default=None, primary_key=True)
    record_type: str = Field(sa_column=Column(String(32), nullable=False))
    record_id: int = Field(sa_column=Column(Integer, nullable=False))
    meaning: str = Field(sa_column=Column(String(32), nullable=False))
    reason: str = Field(default="", sa_column=Column(Text, nullable=False))
    user_id: int = _fk("users.id", index=False)
    username: str = Field(sa_column=Column(String(64), nullable=False))
    printed_name: str = Field(sa_column=Column(String(200), nullable=False))
    signed_at: datetime = _ts()
    digest: str = Field(sa_column=Column(String(64), nullable=False))


class MeasurementInvalidation(SQLModel, table=True):
    __tablename__ = "measurement_invalidations"
    id: int | None = Field(default=None, primary_key=True)
    measurement_id: int = Field(sa_column=Column(Integer, ForeignKey("measurements.id"), nullable=False, unique=True))
    cause: str = _text()
    signature_id: int = _fk("signatures.id", index=False)
    created_at: datetime = _ts()
    created_by: int = _fk("users.id", index=False)


class LotDecision(SQLModel, table=True):
    """The one final decision on a lot (unique per lot: a second decision cannot be stored)."""

    __tablename__ = "lot_decisions"
    id: int | None = Field(default=None, primary_key=True)
    lot_id: int = Field(sa_column=Column(Integer, ForeignKey("lots.id"), nullable=False, unique=True))
    outcome: str = Field(sa_column=Column(String(16), nullable=False))  # released | rejected
    stage: str = Field(sa_column=Column(String(16), nullable=False))  # review | disposition
    signature_id: int = _fk("signatures.id", index=False)
    decided_at: datetime = _ts()
    decided_by: int = _fk("users.id", index=False)


class AuditEvent(SQLModel, table=True):
    """One link of the audit chain; ``hash`` covers the fields and the previous event's hash."""

    __tablename__ = "audit_events"
    __table_args__ = (Index("ix_audit_record", "record_type", "record_id"), {"sqlite_autoincrement": True})
    id: int | None = Field(default=None, primary_key=True)
    seq: int = Field(sa_column=Column(Integer, nullable=False, unique=True))
    occurred_at: datetime = _ts()
    user_id: int | None = Field(default=None, sa_column=Column(Integer, nullable=True))
    username: str = Field(sa_column=Column(String(64), nullable=False))
    action: str = Field(sa_column=Column(String(64), nullable=False))
    record_type: str = Field(sa_column=Column(String(32), nullable=False))
    record_id: str = Field(sa_column=Column(String(64), nullable=False))
    old_values: str = _text()
    new_values: str = _text()
    reason: str = Field(default="", sa_column=Column(Text, nullable=False))
    prev_hash: str = Field(sa_column=Column(String(64), nullable=False, unique=True))
    hash: str = Field(sa_column=Column(String(64), nullable=False, unique=True))
