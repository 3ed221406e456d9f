"""Request and response bodies of the API (v1), with the examples shown in the OpenAPI document."""

from __future__ import annotations

from datetime import date, datetime
from typing import Any, Generic, TypeVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

T = TypeVar("T")

CAUTION = (
    "A computed result is advice to the quality unit, not a release. "
    "Local procedures, the applicable pharmacopoeia and licensed practice govern the decision."
)

_CODE = r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$"


def _examples(*examples: dict[str, Any]) -> ConfigDict:
    return ConfigDict(json_schema_extra={"examples": list(examples)})


MAX_DEPTH = 32


class _TooDeep(ValueError):
    pass


def _nul_paths(value: Any, path: str = "", depth: int = 0) -> list[str]:
    """Where a NUL character hides in a JSON value (databases refuse it in text)."""
    if depth > MAX_DEPTH:
        raise _TooDeep(f"the JSON is nested more than {MAX_DEPTH} levels deep (at {path}); flatten it")
    if isinstance(value, str):
        return [path or "body"] if "\x00" in value else []
    if isinstance(value, dict):
        return [p for k, v in value.items() for p in
                ([f"{path}.{k}".lstrip(".")] if "\x00" in str(k) else [])
                + _nul_paths(v, f"{path}.{k}".lstrip("."), depth + 1)]
    if isinstance(value, list):
        return [p for i, v in enumerate(value) for p in _nul_paths(v, f"{path}[{i}]", depth + 1)]
    return []


class _In(BaseModel):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True)

    @model_validator(mode="before")
    @classmethod
    def _no_nul(cls, data: Any) -> Any:
        bad = _nul_paths(data)
        if bad:
            raise ValueError(f"text must not contain NUL characters (at {', '.join(bad[:5])})")
        return data


# --- problems ------------------------------------------------------------------------------------

class FieldProblemOut(BaseModel):
    path: str = Field(description="where the problem is, e.g. `containers` or `required_bands[2].from`")
    message: str


class Problem(BaseModel):
    """An RFC 9457 problem document (`application/problem+json`)."""

    model_config = _examples({
        "type": "https://bandgate.invalid/problems/invalid-input", "title": "Input is not valid",
        "status": 422, "detail": "containers: Input should be greater than or equal to 1",
        "instance": "/api/v1/lots", "errors": [{"path": "containers", "message": "Input should be greater than or equal to 1"}],
    })
    type: str = Field(description="stable URI naming the kind of problem; branch on this, not on the text")
    title: str
    status: int
    detail: str = Field(description="what is wrong and what to do")
    instance: str | None = None
    errors: list[FieldProblemOut] | None = None


# --- lots ------------------------------------------------------------------------------------------

LOT_CREATE_EXAMPLE = {
    "material": "LACT-MONO", "supplier": "Northfield Excipients", "supplier_lot": "NF-24-1187",
    "containers": 9, "received_on": "2026-11-30", "retest_on": "2028-11-30",
}


class LotCreate(_In):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True,
                              json_schema_extra={"examples": [LOT_CREATE_EXAMPLE]})
    material: str = Field(min_length=1, max_length=64, description="material code")
    supplier: str = Field(min_length=1, max_length=200, description="supplier name (approved for the material)")
    supplier_lot: str = Field(min_length=1, max_length=100, description="the supplier's lot number")
    containers: int = Field(ge=1, le=10_000, description="containers received (N)")
    received_on: date
    retest_on: date | None = Field(default=None, description="expiry or retest date")

    @model_validator(mode="after")
    def _dates(self) -> "LotCreate":
        if self.retest_on is not None and self.retest_on <= self.received_on:
            raise ValueError("retest_on must be after received_on")
        return self


class SamplingPlanOut(BaseModel):
    containers_received: int
    kind: str = Field(description="every_container, or n_plan when the supplier link allows a reduced plan")
    n: int
    p: int
    r: int
    to_test: int
    selected: list[int] = Field(description="container numbers to sample and test")
    reason: str


class ContainerOut(BaseModel):
    number: int
    selected: bool = Field(description="in the sampling plan")
    sampled: bool
    outcome: str = Field(description="untested, passed or failed")


class SignatureOut(BaseModel):
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
    digest: str = Field(description="SHA-256 of the exact record signed")


class EvaluationOut(BaseModel):
    id: int
    verdict: str = Field(description="pass, fail or invalid")
    criteria: list[Any] = Field(default_factory=list, description="each criterion: measured value, limit, outcome")
    document: dict[str, Any] = Field(description="the full evaluation record as stored")
    spec_version_id: int
    spec_version: int | None = None
    reference_id: int
    software_version: str
    created_at: datetime


class MeasurementOut(BaseModel):
    model_config = _examples({
        "id": 12, "lot_code": "IN-2026-00007", "container": 3, "instrument": "FTIR-02", "operator_id": 4,
        "operator": "T. Okafor", "sha256": "9f2c4b0e...", "size": 61234, "file_name": "c3.jdx",
        "received_at": "2026-12-02T09:14:03+00:00", "status": "accepted", "reason": "", "retest_of_id": None,
        "verdict": "pass", "invalidated": False, "invalidation_cause": None, "signatures": [], "lot_state": "testing",
        "evaluation": {"id": 9, "verdict": "pass", "criteria": [], "document": {}, "spec_version_id": 2,
                       "spec_version": 2, "reference_id": 5, "software_version": "0.1.0",
                       "created_at": "2026-12-02T09:14:03+00:00"},
    })
    id: int
    lot_code: str
    container: int
    instrument: str
    operator_id: int
    operator: str
    sha256: str = Field(description="SHA-256 of the bytes received, hex")
    size: int
    file_name: str = Field(description="as sent; metadata only, never used as a path")
    received_at: datetime
    status: str = Field(description="accepted, unreadable or refused")
    reason: str = ""
    retest_of_id: int | None = None
    verdict: str | None = None
    evaluation: EvaluationOut | None = None
    invalidated: bool = False
    invalidation_cause: str | None = None
    signatures: list[SignatureOut] = Field(default_factory=list)
    lot_state: str | None = Field(default=None, description="the lot's state after this upload")


class LotSummary(BaseModel):
    model_config = _examples({
        "id": 7, "code": "IN-2026-00007", "material": "LACT-MONO", "material_name": "Lactose monohydrate",
        "supplier": "Northfield Excipients", "supplier_lot": "NF-24-1187", "containers_received": 9,
        "received_on": "2026-11-30", "retest_on": "2028-11-30", "state": "testing", "state_label": "in testing",
        "created_at": "2026-12-02T08:00:00+00:00", "state_changed_at": "2026-12-02T09:14:03+00:00"})
    id: int
    code: str
    material: str
    material_name: str
    supplier: str
    supplier_lot: str
    containers_received: int
    received_on: date
    retest_on: date | None = None
    state: str
    state_label: str
    created_at: datetime
    state_changed_at: datetime


class LotOut(LotSummary):
    model_config = _examples({
        "id": 7, "code": "IN-2026-00007", "material": "LACT-MONO", "material_name": "Lactose monohydrate",
        "supplier": "Northfield Excipients", "supplier_lot": "NF-24-1187", "containers_received": 9,
        "received_on": "2026-11-30", "retest_on": "2028-11-30", "state": "quarantine",
        "state_label": "received, in quarantine", "created_at": "2026-12-02T08:00:00+00:00", "created_by": 3,
        "state_changed_at": "2026-12-02T08:00:00+00:00",
        "plan": {"containers_received": 9, "kind": "every_container", "n": 4, "p": 2, "r": 5, "to_test": 9,
                 "selected": [1, 2, 3, 4, 5, 6, 7, 8, 9], "reason": "every container is tested"},
        "containers": [{"number": 1, "selected": True, "sampled": False, "outcome": "untested"}],
        "measurements": [], "signatures": [], "decision": None, "caution": CAUTION,
    })
    created_by: int
    plan: SamplingPlanOut
    containers: list[ContainerOut]
    measurements: list[MeasurementOut] = Field(default_factory=list)
    signatures: list[SignatureOut] = Field(default_factory=list)
    decision: dict[str, Any] | None = None
    caution: str = ""


class Page(BaseModel, Generic[T]):
    items: list[T]
    total: int | None = Field(description="all matching items (null where not counted)")
    limit: int
    offset: int
    next_offset: int | None = Field(description="offset of the next page, or null on the last")


# --- catalogue -------------------------------------------------------------------------------------

class MaterialCreate(_In):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True, json_schema_extra={"examples": [
        {"code": "LACT-MONO", "name": "Lactose monohydrate", "description": "Excipient, Ph. Eur. grade (synthetic demo)"}]})
    code: str = Field(pattern=_CODE, description="short code, letters, digits, . _ -")
    name: str = Field(min_length=1, max_length=200)
    description: str = Field(default="", max_length=4000)


class MaterialOut(BaseModel):
    model_config = _examples({"id": 1, "code": "LACT-MONO", "name": "Lactose monohydrate", "description": "",
                              "created_at": "2026-12-02T08:00:00+00:00"})
    id: int
    code: str
    name: str
    description: str
    created_at: datetime


class SpecificationCreate(_In):
    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [
        {"document": {"material": "LACT-MONO", "preparation": "atr", "range_cm1": [650, 4000],
                      "correlation_min": 0.95}}]})
    document: dict[str, Any] = Field(description="the specification document (see the evaluator's documentation); "
                                     "its `material` must be the material in the path")


class SpecificationOut(BaseModel):
    model_config = _examples({"id": 3, "material": "LACT-MONO", "version": 2, "status": "draft", "document": {},
                              "created_at": "2026-12-02T08:00:00+00:00", "created_by": 3, "approved_at": None,
                              "approved_by": None})
    id: int
    material: str
    version: int
    status: str = Field(description="draft, approved or superseded; approval is a person's signed step")
    document: dict[str, Any]
    created_at: datetime
    created_by: int
    approved_at: datetime | None = None
    approved_by: int | None = None


class ReferenceOut(BaseModel):
    model_config = _examples({"id": 5, "material": "LACT-MONO", "preparation": "atr", "file_name": "lactose-ref.jdx",
                              "sha256": "ab12cd...", "size": 58211, "instrument": "FTIR-02",
                              "conditions": "4 cm-1, 32 scans", "measured_on": "2026-11-28", "status": "draft",
                              "created_at": "2026-12-02T08:00:00+00:00", "approved_at": None, "approved_by": None})
    id: int
    material: str
    preparation: str
    file_name: str
    sha256: str
    size: int
    instrument: str | None = None
    conditions: str = ""
    measured_on: date | None = None
    status: str = Field(description="draft, approved or superseded; approval is a person's signed step")
    created_at: datetime
    approved_at: datetime | None = None
    approved_by: int | None = None


class InstrumentCreate(_In):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True, json_schema_extra={"examples": [
        {"code": "FTIR-02", "kind": "FT-IR with diamond ATR", "location": "Goods-in lab, bench 2"}]})
    code: str = Field(pattern=_CODE)
    kind: str = Field(min_length=1, max_length=200)
    location: str = Field(default="", max_length=200)


class InstrumentOut(BaseModel):
    model_config = _examples({"id": 2, "code": "FTIR-02", "kind": "FT-IR with diamond ATR", "location": "Goods-in lab",
                              "active": True, "qualified": True, "last_passing_check_at": "2026-12-02T07:30:00+00:00",
                              "qualified_until": "2026-12-03T07:30:00+00:00",
                              "status_text": "qualified until 2026-12-03 07:30 UTC", "last_check_passed": True,
                              "last_check_measured_at": "2026-12-02T07:30:00+00:00",
                              "last_check_recorded_at": "2026-12-02T07:41:12+00:00"})
    id: int
    code: str
    kind: str
    location: str
    active: bool
    qualified: bool = Field(description="the most recent polystyrene check passed and was measured within the "
                                        "set period")
    last_passing_check_at: datetime | None = Field(
        default=None, description="when the last passing check's film was measured (its recording time if the "
                                  "file carried no time)")
    qualified_until: datetime | None = Field(default=None, description="set only while the most recent check passed")
    status_text: str
    last_check_passed: bool | None = Field(default=None, description="the most recent check (by measurement time); "
                                                                     "null: no check recorded")
    last_check_measured_at: datetime | None = Field(default=None, description="the film's measurement time from the "
                                                                              "file; null: the file carried none")
    last_check_recorded_at: datetime | None = Field(default=None, description="when the server recorded it (audit)")


class InstrumentCheckOut(BaseModel):
    model_config = _examples({"id": 4, "instrument": "FTIR-02", "passed": True,
                              "result": {"passed": True, "checks": [{"name": "band near 1601 cm-1", "measured": 1601.1,
                                                                     "limit": "1600.2-1602.2", "outcome": "pass"}]},
                              "file_name": "ps-2026-12-02.jdx", "sha256": "77aa01...",
                              "checked_at": "2026-12-02T07:41:12+00:00", "checked_by": 3,
                              "measured_at": "2026-12-02T07:30:00+00:00", "counts_from": "2026-12-02T07:30:00+00:00"})
    id: int
    instrument: str
    passed: bool
    result: dict[str, Any]
    file_name: str
    sha256: str
    checked_at: datetime = Field(description="when the server recorded the check (the audit time)")
    checked_by: int
    measured_at: datetime | None = Field(default=None, description="when the film was measured, from the file "
                                         "(JCAMP-DX ##LONGDATE or ##DATE/##TIME; no offset = UTC); null: not in the file")
    counts_from: datetime | None = Field(default=None, description="what qualification counts from: measured_at, "
                                                                   "else checked_at")


# --- evaluation, library, audit ---------------------------------------------------------------------

class LibraryMatchOut(BaseModel):
    rank: int
    material: str
    score: float
    metric: str


class LibrarySearchOut(BaseModel):
    model_config = _examples({"references": 14, "matches": [
        {"rank": 1, "material": "LACT-MONO", "score": 0.993, "metric": "pearson"},
        {"rank": 2, "material": "MCC-101", "score": 0.71, "metric": "pearson"}], "caution": CAUTION})
    references: int = Field(description="approved references searched")
    matches: list[LibraryMatchOut]
    caution: str = ""


class DryRunOut(BaseModel):
    model_config = _examples({"verdict": "pass", "criteria": [], "evaluation": {}, "recorded": False,
                              "specification": "LACT-MONO v2", "caution": CAUTION})
    verdict: str
    criteria: list[Any]
    evaluation: dict[str, Any] = Field(description="the full evaluation, as it would be stored")
    recorded: bool = Field(description="always false: a dry run records nothing")
    specification: str = Field(description="which specification was used")
    caution: str = ""


class AuditVerifyOut(BaseModel):
    model_config = _examples({"ok": True, "events": 128, "files": 21, "signatures": 6, "first_problem": None})
    ok: bool
    events: int
    files: int | None = None
    signatures: int | None = None
    first_problem: str | None = None


class AuditEventOut(BaseModel):
    model_config = _examples({"seq": 17, "occurred_at": "2026-12-02T09:14:03+00:00", "user_id": 4,
                              "username": "tech1", "action": "measurement.recorded", "record_type": "measurement",
                              "record_id": "12", "old_values": None, "new_values": {"status": "accepted"},
                              "reason": "", "prev_hash": "5e1d...", "hash": "c0ffee..."})
    seq: int
    occurred_at: datetime
    user_id: int | None = None
    username: str
    action: str
    record_type: str
    record_id: str
    old_values: Any = None
    new_values: Any = None
    reason: str = ""
    prev_hash: str
    hash: str
