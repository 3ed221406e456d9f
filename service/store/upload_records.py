"""The SQL of the upload path: Core statements on plain rows, each built once.

An upload is the busiest write of the service: one per sampled container of every lot, often
posted by a lab system in bursts. Its look-ups and inserts run here as SQLAlchemy Core statements
on the unit of work's connection, with no ORM row objects, identity map or flush: the same tables,
constraints and append-only triggers, and the same audit chain (`service.store.audit`), for a
fraction of the cost. Every statement is built once at import with bound parameters and run as a
`service.store.prepared.Prepared` statement: compiled once per dialect by SQLAlchemy, with its type
conversions, and executed on the connection's DBAPI cursor without SQLAlchemy's per-execution
machinery (about 13 µs a statement saved, some twenty statements an upload).

The functions answer plain frozen rows; the rules about them live in `service.services.measurements`
and `service.release`.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy import and_, bindparam, case, func, insert, select, text, update
from sqlalchemy.engine import Connection

from service.store.prepared import Prepared

from service.store.tables import (
    Evaluation, Instrument, InstrumentCheck, Lot, LotContainer, Material, Measurement,
    MeasurementInvalidation, ReferenceSpectrum, SpecificationVersion, StoredFile, User,
)

_LOTS = Lot.__table__
_CONTAINERS = LotContainer.__table__
_INSTRUMENTS = Instrument.__table__
_CHECKS = InstrumentCheck.__table__
_SPECS = SpecificationVersion.__table__
_REFS = ReferenceSpectrum.__table__
_MATERIALS = Material.__table__
_FILES = StoredFile.__table__
_MEASUREMENTS = Measurement.__table__
_INVALIDATIONS = MeasurementInvalidation.__table__
_EVALUATIONS = Evaluation.__table__
_USERS = User.__table__


@dataclass(frozen=True, kw_only=True)
class UserRow:
    id: int
    username: str
    printed_name: str
    roles: str


@dataclass(frozen=True, kw_only=True)
class LotRow:
    id: int
    code: str
    state: str
    material_id: int
    containers_received: int


@dataclass(frozen=True, kw_only=True)
class ContainerRow:
    id: int
    number: int
    selected: bool
    sampled: bool


@dataclass(frozen=True, kw_only=True)
class InstrumentRow:
    id: int
    code: str
    active: bool


@dataclass(frozen=True, kw_only=True)
class UploadTarget:
    """What an upload names: the lot, and (if they exist) its container and the instrument."""

    lot: LotRow
    container: ContainerRow | None
    instrument: InstrumentRow | None


@dataclass(frozen=True, kw_only=True)
class SpecRow:
    id: int
    version: int
    document: str


@dataclass(frozen=True, kw_only=True)
class ReferenceRow:
    id: int
    preparation: str
    sha256: str


@dataclass(frozen=True, kw_only=True)
class CheckRow:
    passed: bool
    checked_at: datetime
    measured_at: datetime | None


@dataclass(frozen=True, kw_only=True)
class HistoryRow:
    """One earlier measurement of a container, with what later happened to it."""

    id: int
    status: str
    retest_of_id: int | None
    invalidated: bool
    verdict: str | None


@dataclass(frozen=True, kw_only=True)
class StoredMeasurement:
    """A measurement row as this path inserted it (its values and the new id)."""

    id: int
    lot_id: int
    container_id: int
    instrument_id: int
    operator_id: int
    file_id: int
    sha256: str
    size: int
    file_name: str
    received_at: datetime
    status: str
    reason: str
    retest_of_id: int | None


@dataclass(frozen=True, kw_only=True)
class StoredEvaluation:
    """An evaluation row as this path inserted it (``document`` is the stored canonical JSON)."""

    id: int
    measurement_id: int
    verdict: str
    document: str
    spec_version_id: int | None
    reference_id: int | None
    software_version: str
    created_at: datetime


_ACTIVE_USER = (select(_USERS.c.id, _USERS.c.username, _USERS.c.printed_name, _USERS.c.roles)
                .where(_USERS.c.username == bindparam("username"), _USERS.c.active.is_(True)))
_TARGET = (
    select(_LOTS.c.id, _LOTS.c.code, _LOTS.c.state, _LOTS.c.material_id, _LOTS.c.containers_received,
           _CONTAINERS.c.id, _CONTAINERS.c.number, _CONTAINERS.c.selected, _CONTAINERS.c.sampled,
           _INSTRUMENTS.c.id, _INSTRUMENTS.c.code, _INSTRUMENTS.c.active)
    .select_from(_LOTS)
    .outerjoin(_CONTAINERS, and_(_CONTAINERS.c.lot_id == _LOTS.c.id,
                                 _CONTAINERS.c.number == bindparam("number")))
    .outerjoin(_INSTRUMENTS, _INSTRUMENTS.c.code == bindparam("instrument"))
    .where(_LOTS.c.code == bindparam("code"))
)
_APPROVED_SPEC = (
    select(_SPECS.c.id, _SPECS.c.version, _SPECS.c.document)
    .where(_SPECS.c.material_id == bindparam("material_id"), _SPECS.c.status == "approved")
    .order_by(_SPECS.c.version.desc()).limit(1)
)
# The newest approved reference for the preparation, else the newest approved one of any preparation.
_APPROVED_REFERENCE = (
    select(_REFS.c.id, _REFS.c.preparation, _REFS.c.sha256)
    .where(_REFS.c.material_id == bindparam("material_id"), _REFS.c.status == "approved")
    .order_by(case((_REFS.c.preparation == bindparam("preparation"), 0), else_=1), _REFS.c.id.desc())
    .limit(1)
)
# Both at once, for the write transaction's re-check: which spec and reference are approved now.
_APPROVED_IDS = select(_APPROVED_SPEC.with_only_columns(_SPECS.c.id).scalar_subquery(),
                       _APPROVED_REFERENCE.with_only_columns(_REFS.c.id).scalar_subquery())
_REFERENCE_FILE = (
    select(_FILES.c.content, _REFS.c.file_name)
    .select_from(_REFS).join(_FILES, _FILES.c.id == _REFS.c.file_id)
    .where(_REFS.c.id == bindparam("ref_id"))
)
_LIBRARY_ENTRIES = (
    select(_REFS.c.id, _MATERIALS.c.code, _REFS.c.sha256)
    .join(_MATERIALS, _MATERIALS.c.id == _REFS.c.material_id)
    .where(_REFS.c.status == "approved").order_by(_REFS.c.id)
)
# The most recently measured check (a film's time from its file, else its recording time; ties: the later recorded).
_LATEST_CHECK = (
    select(_CHECKS.c.passed, _CHECKS.c.checked_at, _CHECKS.c.measured_at)
    .where(_CHECKS.c.instrument_id == bindparam("instrument_id"))
    .order_by(func.coalesce(_CHECKS.c.measured_at, _CHECKS.c.checked_at).desc(), _CHECKS.c.id.desc())
    .limit(1)
)
_HISTORY = (
    select(_MEASUREMENTS.c.id, _MEASUREMENTS.c.status, _MEASUREMENTS.c.retest_of_id,
           _INVALIDATIONS.c.id.is_not(None), _EVALUATIONS.c.verdict)
    .select_from(_MEASUREMENTS)
    .outerjoin(_INVALIDATIONS, _INVALIDATIONS.c.measurement_id == _MEASUREMENTS.c.id)
    .outerjoin(_EVALUATIONS, _EVALUATIONS.c.measurement_id == _MEASUREMENTS.c.id)
    .where(_MEASUREMENTS.c.container_id == bindparam("container_id"))
    .order_by(_MEASUREMENTS.c.id)
)
# Containers in the plan, of them with a pass or fail result, of them failed (current results only:
# accepted, evaluated, not invalidated).
_LOT_PROGRESS = text(
    "SELECT COUNT(*), COALESCE(SUM(r.has_result), 0), COALESCE(SUM(r.has_fail), 0) FROM ("
    "SELECT c.id, MAX(CASE WHEN e.verdict IN ('pass', 'fail') THEN 1 ELSE 0 END) AS has_result, "
    "MAX(CASE WHEN e.verdict = 'fail' THEN 1 ELSE 0 END) AS has_fail "
    "FROM lot_containers c "
    "LEFT JOIN measurements m ON m.container_id = c.id AND m.status = 'accepted' "
    "AND NOT EXISTS (SELECT 1 FROM measurement_invalidations i WHERE i.measurement_id = m.id) "
    "LEFT JOIN evaluations e ON e.measurement_id = m.id "
    "WHERE c.lot_id = :lot AND c.selected = :yes GROUP BY c.id) r"
)
_INSERT_FILE = Prepared(insert(_FILES).returning(_FILES.c.id))
_INSERT_MEASUREMENT = Prepared(insert(_MEASUREMENTS).returning(_MEASUREMENTS.c.id))
_INSERT_EVALUATION = Prepared(insert(_EVALUATIONS).returning(_EVALUATIONS.c.id))
_MARK_SAMPLED = (update(_CONTAINERS).where(_CONTAINERS.c.id == bindparam("container_id"))
                 .values(sampled=True, sampled_at=bindparam("at")))
_SET_LOT_STATE = (update(_LOTS).where(_LOTS.c.id == bindparam("lot_id"))
                  .values(state=bindparam("new_state"), state_changed_at=bindparam("at")))

# Run as Prepared statements (service.store.prepared): compiled once per dialect, no execution overhead.
_RUN_ACTIVE_USER = Prepared(_ACTIVE_USER)
_RUN_TARGET = Prepared(_TARGET)
_RUN_APPROVED_SPEC = Prepared(_APPROVED_SPEC)
_RUN_APPROVED_REFERENCE = Prepared(_APPROVED_REFERENCE)
_RUN_APPROVED_IDS = Prepared(_APPROVED_IDS)
_RUN_REFERENCE_FILE = Prepared(_REFERENCE_FILE)
_RUN_LIBRARY_ENTRIES = Prepared(_LIBRARY_ENTRIES)
_RUN_LATEST_CHECK = Prepared(_LATEST_CHECK)
_RUN_HISTORY = Prepared(_HISTORY)
_RUN_LOT_PROGRESS = Prepared(_LOT_PROGRESS)
_RUN_MARK_SAMPLED = Prepared(_MARK_SAMPLED)
_RUN_SET_LOT_STATE = Prepared(_SET_LOT_STATE)


def active_user(conn: Connection, username: str) -> UserRow | None:
    """The active user with this (already normalised) username, or None."""
    row = _RUN_ACTIVE_USER.first(conn, {"username": username})
    return None if row is None else UserRow(id=row[0], username=row[1], printed_name=row[2], roles=row[3])


def upload_target(conn: Connection, *, lot_code: str, container: int, instrument_code: str) -> UploadTarget | None:
    """The lot with this code (None if there is none), its container of that number and the instrument."""
    row = _RUN_TARGET.first(conn, {"code": lot_code, "number": container, "instrument": instrument_code})
    if row is None:
        return None
    lot = LotRow(id=row[0], code=row[1], state=row[2], material_id=row[3], containers_received=row[4])
    cont = None if row[5] is None else ContainerRow(id=row[5], number=row[6], selected=bool(row[7]),
                                                   sampled=bool(row[8]))
    inst = None if row[9] is None else InstrumentRow(id=row[9], code=row[10], active=bool(row[11]))
    return UploadTarget(lot=lot, container=cont, instrument=inst)


def approved_spec(conn: Connection, material_id: int) -> SpecRow | None:
    row = _RUN_APPROVED_SPEC.first(conn, {"material_id": material_id})
    return None if row is None else SpecRow(id=row[0], version=row[1], document=row[2])


def approved_reference(conn: Connection, material_id: int, preparation: str | None) -> ReferenceRow | None:
    row = _RUN_APPROVED_REFERENCE.first(conn, {"material_id": material_id, "preparation": preparation})
    return None if row is None else ReferenceRow(id=row[0], preparation=row[1], sha256=row[2])


def approved_ids(conn: Connection, material_id: int, preparation: str | None) -> tuple[int | None, int | None]:
    """(approved spec id, approved reference id) now: the same choice as `approved_spec` and
    `approved_reference`, in one statement."""
    row = _RUN_APPROVED_IDS.first(conn, {"material_id": material_id, "preparation": preparation})
    return row[0], row[1]


def reference_file(conn: Connection, ref_id: int) -> tuple[bytes, str]:
    """A reference spectrum's stored bytes and file name (empty when there is no such reference)."""
    row = _RUN_REFERENCE_FILE.first(conn, {"ref_id": ref_id})
    return (bytes(row[0]), str(row[1])) if row is not None else (b"", "")


def library_entries(conn: Connection) -> list[tuple[int, str, str]]:
    """(reference id, material code, SHA-256) of every approved reference, in id order."""
    return [(int(i), str(c), str(h)) for i, c, h in _RUN_LIBRARY_ENTRIES.rows(conn)]


def latest_check(conn: Connection, instrument_id: int) -> CheckRow | None:
    row = _RUN_LATEST_CHECK.first(conn, {"instrument_id": instrument_id})
    return None if row is None else CheckRow(passed=bool(row[0]), checked_at=row[1], measured_at=row[2])


def container_history(conn: Connection, container_id: int) -> list[HistoryRow]:
    """Every measurement of the container in id order, with whether it was invalidated and its verdict."""
    return [HistoryRow(id=r[0], status=r[1], retest_of_id=r[2], invalidated=bool(r[3]), verdict=r[4])
            for r in _RUN_HISTORY.rows(conn, {"container_id": container_id})]


def lot_progress(conn: Connection, lot_id: int) -> tuple[int, int, int]:
    """(containers in the plan, of them with a pass or fail result, of them failed) -- one aggregate query."""
    row = _RUN_LOT_PROGRESS.first(conn, {"lot": lot_id, "yes": True})
    return int(row[0]), int(row[1]), int(row[2])


def _inserted_id(conn: Connection, statement: Prepared, values: dict[str, Any]) -> int:
    return statement.inserted_id(conn, values)


def insert_file(conn: Connection, *, data: bytes, sha256: str, created_at: datetime) -> int:
    return _inserted_id(conn, _INSERT_FILE, {"sha256": sha256, "size": len(data), "content": data,
                                             "created_at": created_at})


def insert_measurement(conn: Connection, values: dict[str, Any]) -> StoredMeasurement:
    return StoredMeasurement(id=_inserted_id(conn, _INSERT_MEASUREMENT, values), **values)


def insert_evaluation(conn: Connection, values: dict[str, Any]) -> StoredEvaluation:
    return StoredEvaluation(id=_inserted_id(conn, _INSERT_EVALUATION, values), **values)


def mark_sampled(conn: Connection, container_id: int, at: datetime) -> None:
    _RUN_MARK_SAMPLED.run(conn, {"container_id": container_id, "at": at})


def set_lot_state(conn: Connection, lot_id: int, state: str, at: datetime) -> None:
    _RUN_SET_LOT_STATE.run(conn, {"lot_id": lot_id, "new_state": state, "at": at})
