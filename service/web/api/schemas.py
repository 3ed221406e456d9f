"""Request and response bodies of the API (v1), with the examples shown in the OpenAPI document."""

from __future__ import annotations

from datetime import date, datetime
from typing import Any, Generic, TypeVar

from pydantic import BaseModel, ConfigDict, Field, model_validator

T = TypeVar("T")

_CODE = r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$"


def _examples(*examples: dict[str, Any]) -> ConfigDict:
    return ConfigDict(json_schema_extra={"examples": list(examples)})


class _In(BaseModel):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True)


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
    outcome: str | None = Field(default=None, description="untested, passed or failed")


class EvaluationOut(BaseModel):
    verdict: str = Field(description="pass, fail or invalid")
    criteria: list[dict[str, Any]] = Field(default_factory=list)
    warnings: list[Any] = Field(default_factory=list)
    document: dict[str, Any] = Field(default_factory=dict, description="the full evaluation record")


class MeasurementOut(BaseModel):
    model_config = _examples({
        "id": 12, "lot": "L-2026-0007", "container": 3, "instrument": "FTIR-02", "operator": "tech1",
        "sha256": "9f2c...e1", "size": 61234, "file_name": "c3.jdx", "received_at": "2026-12-02T09:14:03Z",
        "status": "accepted", "reason": "", "retest_of": None, "lot_state": "testing",
        "evaluation": {"verdict": "pass", "criteria": [], "warnings": [], "document": {}},
    })
    id: int
    lot: str
    container: int
    instrument: str
    operator: str
    sha256: str = Field(description="SHA-256 of the bytes received, hex")
    size: int
    file_name: str = Field(description="as sent; metadata only, never used as a path")
    received_at: datetime
    status: str = Field(description="accepted, unreadable or refused")
    reason: str = ""
    retest_of: int | None = None
    lot_state: str | None = None
    evaluation: EvaluationOut | None = None


class SignatureOut(BaseModel):
    meaning: str
    reason: str
    user_id: int
    username: str
    printed_name: str
    signed_at: datetime
    digest: str = Field(description="SHA-256 of the exact record signed")
    record_type: str | None = None
    record_id: int | None = None


class LotSummary(BaseModel):
    code: str
    material: str
    supplier: str
    supplier_lot: str
    containers_received: int
    received_on: date
    retest_on: date | None = None
    state: str
    state_label: str


class LotOut(LotSummary):
    model_config = _examples({
        "code": "L-2026-0007", "material": "LACT-MONO", "supplier": "Northfield Excipients",
        "supplier_lot": "NF-24-1187", "containers_received": 9, "received_on": "2026-11-30",
        "retest_on": "2028-11-30", "state": "quarantine", "state_label": "received, in quarantine",
        "plan": {"containers_received": 9, "kind": "every_container", "n": 4, "p": 2, "r": 5, "to_test": 9,
                 "selected": [1, 2, 3, 4, 5, 6, 7, 8, 9], "reason": "every container is tested"},
        "containers": [{"number": 1, "selected": True, "sampled": False, "outcome": "untested"}],
        "measurements": [], "signatures": [], "caution": "A computed result is advice to the quality unit, not a release.",
    })
    plan: SamplingPlanOut
    containers: list[ContainerOut]
    measurements: list[MeasurementOut] = Field(default_factory=list)
    signatures: list[SignatureOut] = Field(default_factory=list)
    caution: str = ""


class Page(BaseModel, Generic[T]):
    items: list[T]
    total: int
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
    model_config = _examples({"code": "LACT-MONO", "name": "Lactose monohydrate", "description": "",
                              "created_at": "2026-12-02T08:00:00Z"})
    code: str
    name: str
    description: str
    created_at: datetime | None = None


class SpecificationCreate(_In):
    model_config = ConfigDict(extra="forbid", json_schema_extra={"examples": [
        {"document": {"material": "LACT-MONO", "preparation": "atr", "range_cm1": [650, 4000],
                      "correlation_min": 0.95}}]})
    document: dict[str, Any] = Field(description="the specification document (see the evaluator's documentation)")


class SpecificationOut(BaseModel):
    model_config = _examples({"id": 3, "material": "LACT-MONO", "version": 2, "status": "draft",
                              "document": {}, "created_at": "2026-12-02T08:00:00Z", "approved_at": None})
    id: int
    material: str
    version: int
    status: str = Field(description="draft, approved or superseded; approval is a person's signed step")
    document: dict[str, Any]
    created_at: datetime | None = None
    approved_at: datetime | None = None


class ReferenceOut(BaseModel):
    model_config = _examples({"id": 5, "material": "LACT-MONO", "preparation": "atr", "sha256": "ab12...",
                              "file_name": "lactose-ref.jdx", "instrument": "FTIR-02", "conditions": "4 cm-1, 32 scans",
                              "measured_on": "2026-11-28", "status": "draft", "created_at": "2026-12-02T08:00:00Z"})
    id: int
    material: str
    preparation: str
    sha256: str
    file_name: str
    instrument: str | None = None
    conditions: str = ""
    measured_on: date | None = None
    status: str
    created_at: datetime | None = None
    approved_at: datetime | None = None


class InstrumentCreate(_In):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True, json_schema_extra={"examples": [
        {"code": "FTIR-02", "kind": "FT-IR with diamond ATR", "location": "Goods-in lab, bench 2"}]})
    code: str = Field(pattern=_CODE)
    kind: str = Field(min_length=1, max_length=200)
    location: str = Field(default="", max_length=200)


class InstrumentOut(BaseModel):
    model_config = _examples({"code": "FTIR-02", "kind": "FT-IR with diamond ATR", "location": "Goods-in lab",
                              "active": True, "qualified": True, "last_check_at": "2026-12-02T07:30:00Z"})
    code: str
    kind: str
    location: str
    active: bool = True
    qualified: bool | None = Field(default=None, description="a passing polystyrene check within the set period")
    last_check_at: datetime | None = None


class InstrumentCheckOut(BaseModel):
    model_config = _examples({"id": 4, "instrument": "FTIR-02", "passed": True, "checks": [
        {"name": "band 1601.2", "measured": 1601.0, "limit": "1600.2-1602.2", "outcome": "pass"}],
        "checked_at": "2026-12-02T07:30:00Z", "sha256": "77aa..."})
    id: int
    instrument: str
    passed: bool
    checks: list[dict[str, Any]]
    checked_at: datetime
    sha256: str | None = None


# --- evaluation, library, audit ---------------------------------------------------------------------

class LibraryMatchOut(BaseModel):
    material: str
    reference_id: int | None = None
    score: float
    rank: int


class LibrarySearchOut(BaseModel):
    model_config = _examples({"matches": [{"material": "LACT-MONO", "reference_id": 5, "score": 0.993, "rank": 1},
                                          {"material": "MCC-101", "reference_id": 9, "score": 0.71, "rank": 2}]})
    matches: list[LibraryMatchOut]
    caution: str = ""


class AuditVerifyOut(BaseModel):
    model_config = _examples({"ok": True, "events": 128, "first_problem": None})
    ok: bool
    events: int
    first_problem: str | None = None


class AuditEventOut(BaseModel):
    model_config = _examples({"seq": 17, "occurred_at": "2026-12-02T09:14:03Z", "username": "tech1",
                              "action": "measurement.recorded", "record_type": "measurement", "record_id": "12",
                              "old_values": None, "new_values": {"status": "accepted"}, "reason": "", "hash": "c0ffee..."})
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
    hash: str
