"""The Evaluation: a verdict with all of its evidence, in a JSON-safe, stable form.

``Evaluation.as_dict()`` is the record the records layer stores and the API returns; its fields
are documented in ``docs/evaluation.md``. Change them only by adding fields.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Criterion", "Evaluation", "Match", "Notice", "RECORD_SCHEMA", "CAUTION"]

RECORD_SCHEMA = "bandgate.evaluation/1"
CAUTION = ("A computed pass is advice to qualified staff, not a release: the decision rests with the quality "
           "unit under local procedures, the applicable pharmacopoeia and licensed practice.")


def json_safe(value: Any) -> Any:
    """Plain JSON values: floats rounded to 6 significant digits, NaN/inf as None, tuples as lists.

    The plain built-in types are dispatched on their exact type (the common case, and the cost of
    every stored document); inside a dict or list the leaves (text, whole numbers, booleans, None
    and floats) are handled in place rather than by a call per leaf. Anything else (numpy scalars,
    subclasses) goes through :func:`_json_safe_other`, whose rules are the same.
    """
    kind = type(value)
    if kind is dict:
        out: dict[str, Any] = {}
        for k, v in value.items():
            key = k if type(k) is str else str(k)
            t = type(v)
            if t is str or t is int or t is bool or v is None:
                out[key] = v
            elif t is float:
                out[key] = float(f"{v:.6g}") if _isfinite(v) else None
            else:
                out[key] = json_safe(v)
        return out
    if kind is list or kind is tuple:
        items: list[Any] = []
        for v in value:
            t = type(v)
            if t is str or t is int or t is bool or v is None:
                items.append(v)
            elif t is float:
                items.append(float(f"{v:.6g}") if _isfinite(v) else None)
            else:
                items.append(json_safe(v))
        return items
    if kind is float:
        return float(f"{value:.6g}") if _isfinite(value) else None
    if kind is str or kind is int or kind is bool or value is None:
        return value
    return _json_safe_other(value)


_isfinite = math.isfinite


def _json_safe_other(value: Any) -> Any:
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float) or hasattr(value, "dtype"):
        try:
            v = float(value)
        except (TypeError, ValueError):
            return str(value)
        if not math.isfinite(v):
            return None
        return float(f"{v:.6g}")
    if isinstance(value, dict):
        return {str(k): json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    return str(value)


@dataclass(frozen=True, kw_only=True)
class Criterion:
    """One check: what was measured, against which limit, and the outcome.

    ``comparison`` says how ``measured`` meets ``limit`` (">=", "<=" or None when the check has
    several parts, each listed in ``details["checks"]``).
    """

    kind: str  # quality | required_band | forbidden_band | fingerprint | specificity
    label: str
    outcome: str  # pass | fail
    measured: float | None
    limit: float | None
    comparison: str | None
    unit: str
    message: str
    details: dict[str, Any] = field(default_factory=dict)

    @property
    def passed(self) -> bool:
        return self.outcome == "pass"

    def as_dict(self) -> dict[str, Any]:
        return json_safe({
            "kind": self.kind, "label": self.label, "outcome": self.outcome, "measured": self.measured,
            "limit": self.limit, "comparison": self.comparison, "unit": self.unit, "message": self.message,
            "details": self.details,
        })


@dataclass(frozen=True, kw_only=True)
class Notice:
    """A warning (valid but suspicious) or a reason the measurement cannot be judged."""

    code: str
    message: str

    def as_dict(self) -> dict[str, str]:
        return {"code": self.code, "message": self.message}


@dataclass(frozen=True, kw_only=True)
class Match:
    """One library reference ranked against the sample."""

    rank: int
    material: str
    score: float
    metric: str

    def as_dict(self) -> dict[str, Any]:
        return json_safe({"rank": self.rank, "material": self.material, "score": self.score, "metric": self.metric})


@dataclass(frozen=True, kw_only=True)
class Evaluation:
    """The outcome of testing one sample spectrum against one specification and reference.

    ``verdict`` is ``pass`` only if every criterion passes; ``fail`` if any criterion fails;
    ``invalid`` if the measurement cannot be judged (``invalid_reasons`` says why: measure again).
    """

    verdict: str
    criteria: tuple[Criterion, ...]
    warnings: tuple[Notice, ...]
    invalid_reasons: tuple[Notice, ...]
    specification: dict[str, Any]
    sample: dict[str, Any]
    reference: dict[str, Any]
    preprocessing: dict[str, Any]
    excluded_regions: tuple[dict[str, Any], ...]
    matches: tuple[Match, ...] | None
    software: dict[str, str]

    @property
    def failed_criteria(self) -> tuple[Criterion, ...]:
        return tuple(c for c in self.criteria if not c.passed)

    def summary(self) -> str:
        """One line a person can read."""
        if self.verdict == "invalid":
            return "invalid: " + "; ".join(n.message for n in self.invalid_reasons)
        if self.verdict == "fail":
            return "fail: " + "; ".join(f"{c.label}: {c.message}" for c in self.failed_criteria)
        return f"pass: all {len(self.criteria)} criteria met"

    def as_dict(self) -> dict[str, Any]:
        return {
            "schema": RECORD_SCHEMA,
            "verdict": self.verdict,
            "summary": self.summary(),
            "caution": CAUTION,
            "criteria": [c.as_dict() for c in self.criteria],
            "warnings": [w.as_dict() for w in self.warnings],
            "invalid_reasons": [w.as_dict() for w in self.invalid_reasons],
            "specification": json_safe(self.specification),
            "sample": json_safe(self.sample),
            "reference": json_safe(self.reference),
            "preprocessing": json_safe(self.preprocessing),
            "excluded_regions": json_safe(list(self.excluded_regions)),
            "matches": None if self.matches is None else [m.as_dict() for m in self.matches],
            "software": dict(self.software),
        }
