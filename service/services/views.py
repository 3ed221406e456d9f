"""Read models returned by the use cases: frozen, plain values, no database sessions attached."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from datetime import date, datetime, timezone
from typing import Any


def _plain(value: Any) -> Any:
    if isinstance(value, _View):
        return value.as_dict()
    if isinstance(value, datetime):
        if value.tzinfo is None:
            value = value.replace(tzinfo=timezone.utc)
        return value.astimezone(timezone.utc).isoformat()
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    return value


class _View:
    # Fields that hold JSON parsed from a stored document: plain already, passed on as they are
    # (not walked value by value; treat them as read-only).
    _json_fields: frozenset[str] = frozenset()

    def as_dict(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) if f.name in self._json_fields else _plain(getattr(self, f.name))
                for f in dataclasses.fields(self)}  # type: ignore[arg-type]


def utc(value: datetime | None) -> datetime | None:
    if value is None:
        return None
    return value.replace(tzinfo=timezone.utc) if value.tzinfo is None else value.astimezone(timezone.utc)


@dataclass(frozen=True, kw_only=True)
class UserView(_View):
    id: int
    username: str
    printed_name: str
    roles: tuple[str, ...]
    active: bool
    created_at: datetime


@dataclass(frozen=True, kw_only=True)
class MaterialView(_View):
    id: int
    code: str
    name: str
    description: str
    created_at: datetime


@dataclass(frozen=True, kw_only=True)
class SupplierView(_View):
    id: int
    name: str


@dataclass(frozen=True, kw_only=True)
class SupplierApprovalView(_View):
    material: str
    supplier: str
    reduced_plan: bool
    active: bool


@dataclass(frozen=True, kw_only=True)
class SpecVersionView(_View):
    id: int
    material: str
    version: int
    status: str
    document: dict[str, Any]
    created_at: datetime
    created_by: int
    approved_at: datetime | None
    approved_by: int | None


@dataclass(frozen=True, kw_only=True)
class ReferenceView(_View):
    id: int
    material: str
    preparation: str
    file_name: str
    sha256: str
    size: int
    instrument: str | None
    conditions: str
    measured_on: date | None
    status: str
    created_at: datetime
    approved_at: datetime | None
    approved_by: int | None


@dataclass(frozen=True, kw_only=True)
class InstrumentView(_View):
    id: int
    code: str
    kind: str
    location: str
    active: bool
    qualified: bool
    last_passing_check_at: datetime | None  # when the last passing check's film was measured (else recorded)
    qualified_until: datetime | None  # only while the most recent check passed
    status_text: str
    last_check_passed: bool | None = None  # the most recent check (by measurement time); None: no check yet
    last_check_measured_at: datetime | None = None  # as the file says (UTC); None: the file carries no time
    last_check_recorded_at: datetime | None = None  # the server's recording time (audit time)


@dataclass(frozen=True, kw_only=True)
class InstrumentCheckView(_View):
    id: int
    instrument: str
    passed: bool
    result: dict[str, Any]
    file_name: str
    sha256: str
    checked_at: datetime  # the server's recording time (the audit time)
    checked_by: int
    measured_at: datetime | None = None  # the film's measurement time from the file (UTC); None: not in the file
    counts_from: datetime | None = None  # what qualification counts from: measured_at, else checked_at


@dataclass(frozen=True, kw_only=True)
class SignatureView(_View):
    id: int
    record_type: str
    record_id: int
    meaning: str
    meaning_text: str
    reason: str
    user_id: int
    username: str
    printed_name: str
    signed_at: datetime
    digest: str


@dataclass(frozen=True, kw_only=True)
class EvaluationView(_View):
    _json_fields = frozenset({"document"})  # parsed from the stored canonical JSON
    id: int
    verdict: str
    document: dict[str, Any]
    spec_version_id: int
    spec_version: int | None
    reference_id: int
    software_version: str
    created_at: datetime


@dataclass(frozen=True, kw_only=True)
class MeasurementView(_View):
    id: int
    lot_code: str
    container: int
    instrument: str
    operator_id: int
    operator: str
    sha256: str
    size: int
    file_name: str
    received_at: datetime
    status: str  # accepted | unreadable | refused
    reason: str
    retest_of_id: int | None
    evaluation: EvaluationView | None
    invalidated: bool
    invalidation_cause: str | None
    signatures: tuple[SignatureView, ...] = ()

    @property
    def verdict(self) -> str | None:
        return self.evaluation.verdict if self.evaluation else None

    def as_dict(self) -> dict[str, Any]:
        d = super().as_dict()
        d["verdict"] = self.verdict
        return d


@dataclass(frozen=True, kw_only=True)
class ContainerView(_View):
    number: int
    selected: bool
    sampled: bool
    outcome: str  # untested | passed | failed


@dataclass(frozen=True, kw_only=True)
class LotView(_View):
    id: int
    code: str
    material: str
    material_name: str
    supplier: str
    supplier_lot: str
    containers_received: int
    received_on: date
    retest_on: date | None
    state: str
    state_label: str
    plan: dict[str, Any]
    created_at: datetime
    created_by: int
    state_changed_at: datetime
    containers: tuple[ContainerView, ...] = ()
    measurements: tuple[MeasurementView, ...] = ()
    signatures: tuple[SignatureView, ...] = ()
    decision: dict[str, Any] | None = None
    received_by: str = ""  # printed name of the person who received the lot
