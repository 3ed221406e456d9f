"""PURE: material specification, the pass/fail evaluator with mix-up detection, library search.

Imports nothing from the web or the database; builds on ``service.spectra``.
"""

from service.evaluation.evaluate import clear_reference_cache, evaluate
from service.evaluation.library import LibraryView, ReferenceLibrary
from service.evaluation.method import Method, Prepared, RangeNotCovered, prepare, spectrum_data_digest
from service.evaluation.preparations import PREPARATIONS, SOLVENTS, ExcludedRegion, Preparation, excluded_regions
from service.evaluation.result import CAUTION, RECORD_SCHEMA, Criterion, Evaluation, Match, Notice
from service.evaluation.specification import (
    BandRule,
    Fingerprint,
    ForbiddenBand,
    QualityRule,
    Specification,
    SpecificationError,
    parse_specification,
)

__all__ = [
    "CAUTION", "PREPARATIONS", "RECORD_SCHEMA", "SOLVENTS",
    "BandRule", "Criterion", "Evaluation", "ExcludedRegion", "Fingerprint", "ForbiddenBand", "LibraryView",
    "Match", "Method", "Notice", "Preparation", "Prepared", "QualityRule", "RangeNotCovered", "ReferenceLibrary",
    "Specification", "SpecificationError",
    "clear_reference_cache", "evaluate", "excluded_regions", "parse_specification", "prepare",
    "spectrum_data_digest",
]
