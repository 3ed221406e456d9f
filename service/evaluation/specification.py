"""The material specification: a versioned JSON document, validated once at the boundary.

``parse_specification(doc)`` turns the document into a frozen :class:`Specification` or raises
:class:`SpecificationError` naming *every* wrong field with its path and the fix
(``required_bands[2].from: must be a number between 400 and 7800``). ``Specification.as_document()``
gives the canonical document back; parsing it again gives an equal specification.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import Any

from service.errors import FieldProblem, InvalidInput
from service.evaluation.preparations import PREPARATIONS, SOLVENTS, ExcludedRegion, excluded_regions

__all__ = [
    "METRICS",
    "BASELINES",
    "BandRule",
    "ForbiddenBand",
    "Fingerprint",
    "QualityRule",
    "Specification",
    "SpecificationError",
    "parse_specification",
]

WAVENUMBER_MIN = 400.0
WAVENUMBER_MAX = 7800.0
METRICS = ("pearson", "first-derivative", "euclidean")
BASELINES = ("asls", "rubberband", "none")


class SpecificationError(InvalidInput):
    """The specification document is not valid; ``fields`` lists every problem."""

    code = "invalid-specification"
    title = "Specification is not valid"


def _num(v: float) -> float | int:
    return int(v) if float(v).is_integer() else float(v)


def _lohi(a: float, b: float) -> tuple[float, float]:
    return (a, b) if a < b else (b, a)


@dataclass(frozen=True, kw_only=True)
class BandRule:
    """A band that must be present in the window ``from``–``to`` (either order), with optional limits."""

    label: str
    start: float
    end: float
    min_relative_intensity: float | None = None
    max_relative_intensity: float | None = None
    min_width: float | None = None
    max_width: float | None = None
    position: float | None = None
    tolerance: float | None = None

    @property
    def window(self) -> tuple[float, float]:
        return _lohi(self.start, self.end)

    def as_document(self) -> dict[str, Any]:
        doc: dict[str, Any] = {"label": self.label, "from": _num(self.start), "to": _num(self.end)}
        for key in ("min_relative_intensity", "max_relative_intensity", "min_width", "max_width",
                    "position", "tolerance"):
            value = getattr(self, key)
            if value is not None:
                doc[key] = _num(value)
        return doc


@dataclass(frozen=True, kw_only=True)
class ForbiddenBand:
    """No band in the window may reach ``max_relative_intensity`` of the strongest band."""

    label: str
    start: float
    end: float
    max_relative_intensity: float

    @property
    def window(self) -> tuple[float, float]:
        return _lohi(self.start, self.end)

    def as_document(self) -> dict[str, Any]:
        return {"label": self.label, "from": _num(self.start), "to": _num(self.end),
                "max_relative_intensity": _num(self.max_relative_intensity)}


@dataclass(frozen=True, kw_only=True)
class Fingerprint:
    """Whole-region similarity to the reference: ``min_score`` for correlations, ``max_distance`` for euclidean."""

    metric: str
    regions: tuple[tuple[float, float], ...] | None = None  # as given; None = range less exclusions
    min_score: float | None = None
    max_distance: float | None = None

    @property
    def higher_is_better(self) -> bool:
        return self.metric != "euclidean"

    @property
    def limit(self) -> float:
        return float(self.max_distance if self.metric == "euclidean" else self.min_score)  # type: ignore[arg-type]

    def as_document(self) -> dict[str, Any]:
        doc: dict[str, Any] = {"metric": self.metric}
        if self.regions is not None:
            doc["regions"] = [[_num(a), _num(b)] for a, b in self.regions]
        if self.min_score is not None:
            doc["min_score"] = _num(self.min_score)
        if self.max_distance is not None:
            doc["max_distance"] = _num(self.max_distance)
        return doc


@dataclass(frozen=True, kw_only=True)
class QualityRule:
    """Limits on the strongest band's absorbance (common practice: ≲ 1.5 and ≳ 0.1)."""

    max_absorbance: float = 1.5
    min_absorbance: float = 0.1

    def as_document(self) -> dict[str, Any]:
        return {"max_absorbance": _num(self.max_absorbance), "min_absorbance": _num(self.min_absorbance)}


@dataclass(frozen=True, kw_only=True)
class Specification:
    """One version of a material's identity specification (see ``docs/evaluation.md``)."""

    material: str
    name: str
    version: int
    preparation: str
    solvent: str | None = None
    range: tuple[float, float]  # as given (usually high, low)
    exclude: tuple[tuple[float, float], ...] = ()
    required_bands: tuple[BandRule, ...] = ()
    forbidden_bands: tuple[ForbiddenBand, ...] = ()
    fingerprint: Fingerprint | None = None
    quality: QualityRule = QualityRule()
    baseline: str = "asls"

    @property
    def window(self) -> tuple[float, float]:
        """The evaluated range as ``(lo, hi)``."""
        return _lohi(*self.range)

    def excluded_regions(self) -> tuple[ExcludedRegion, ...]:
        """The preparation's default exclusions plus the specification's own, clipped to the range."""
        found = self.__dict__.get("_excluded_regions")
        if found is None:  # frozen, and the regions are frozen too: remembered once, outside the fields
            lo, hi = self.window
            own = tuple(ExcludedRegion(lo=min(a, b), hi=max(a, b), reason="excluded by the specification",
                                       source="specification") for a, b in self.exclude)
            found = tuple(r for r in excluded_regions(self.preparation, self.solvent) + own if r.overlaps(lo, hi))
            object.__setattr__(self, "_excluded_regions", found)
        return found  # type: ignore[no-any-return]

    def fingerprint_regions(self) -> tuple[tuple[float, float], ...]:
        """The regions compared, as ``(lo, hi)``; exclusions are masked inside them in any case."""
        if self.fingerprint is not None and self.fingerprint.regions:
            return tuple(_lohi(a, b) for a, b in self.fingerprint.regions)
        return (self.window,)

    def as_document(self) -> dict[str, Any]:
        doc: dict[str, Any] = {
            "material": self.material, "name": self.name, "version": self.version,
            "preparation": (self.preparation if self.solvent is None
                            else {"method": self.preparation, "solvent": self.solvent}),
            "range": [_num(self.range[0]), _num(self.range[1])],
            "exclude": [[_num(a), _num(b)] for a, b in self.exclude],
            "required_bands": [b.as_document() for b in self.required_bands],
            "forbidden_bands": [b.as_document() for b in self.forbidden_bands],
        }
        if self.fingerprint is not None:
            doc["fingerprint"] = self.fingerprint.as_document()
        doc["quality"] = self.quality.as_document()
        if self.baseline != "asls":
            doc["preprocessing"] = {"baseline": self.baseline}
        return doc

    def digest(self) -> str:
        """SHA-256 of the canonical document (sorted keys, compact), to tie a result to its specification."""
        found = self.__dict__.get("_digest")
        if found is None:  # frozen: remembered once, outside the fields
            text = json.dumps(self.as_document(), sort_keys=True, separators=(",", ":"), ensure_ascii=False)
            found = hashlib.sha256(text.encode("utf-8")).hexdigest()
            object.__setattr__(self, "_digest", found)
        return found


def parse_specification(doc: Any) -> Specification:
    """Validate a specification document and build the :class:`Specification`.

    Raises
    ------
    SpecificationError
        Naming every wrong field with its path and what to do, in one go.
    """
    from service.evaluation._spec_rules import check_document

    problems: list[FieldProblem] = []
    spec = check_document(doc, problems)
    if problems or spec is None:
        listed = "; ".join(f"{p.path}: {p.message}" for p in problems[:5])
        more = f" (and {len(problems) - 5} more)" if len(problems) > 5 else ""
        raise SpecificationError(
            f"the specification has {len(problems)} problem(s): {listed}{more}", fields=problems)
    return spec


# Re-exported for the validator and documentation.
KNOWN_PREPARATIONS = tuple(PREPARATIONS)
KNOWN_SOLVENTS = tuple(SOLVENTS)
