"""Deriving a fingerprint limit from authentic lots instead of a fixed 0.95.

A fixed r ≥ 0.95 has no statistical basis and can pass adulterated material; better labs score
spectra of authentic lots against the reference and set the limit at mean − k·sd of those scores
(mean + k·sd for a distance), then confirm it on an independent set (common practice; see
``../shared/domain.md``, Match limits). This module does the arithmetic with the evaluator's own
method, so the limit fits the score it will be compared with.
"""

from __future__ import annotations

import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from service.evaluation.method import Method, prepare, score
from service.evaluation.specification import Specification
from service.spectra.model import Spectrum

__all__ = ["DerivedLimit", "derive_limit"]


@dataclass(frozen=True, kw_only=True)
class DerivedLimit:
    metric: str
    scores: tuple[float, ...]
    mean: float
    sd: float
    k: float
    limit: float

    def as_dict(self) -> dict[str, Any]:
        return {"metric": self.metric, "scores": list(self.scores), "mean": self.mean, "sd": self.sd, "k": self.k,
                "limit": self.limit, "rule": "mean - k*sd" if self.metric != "euclidean" else "mean + k*sd"}


def derive_limit(authentic: Sequence[Spectrum], reference: Spectrum, spec: Specification, *,
                 k: float = 3.0) -> DerivedLimit:
    """Score ``authentic`` spectra against ``reference`` by ``spec``'s method; limit = mean ∓ k·sd.

    Needs at least three authentic spectra. The limit is kept within the metric's range
    (correlations in (0, 1], distances in (0, 2]).
    """
    if len(authentic) < 3:
        raise ValueError("derive a limit from at least three authentic spectra")
    method = Method.for_specification(spec)
    ref = prepare(reference, method).vector
    scores = tuple(score(prepare(s, method).vector, ref, method.metric) for s in authentic)
    mean, sd = statistics.fmean(scores), statistics.stdev(scores)
    if method.metric == "euclidean":
        limit = min(2.0, mean + k * sd)
    else:
        limit = min(1.0, max(1e-6, mean - k * sd))
    return DerivedLimit(metric=method.metric, scores=scores, mean=mean, sd=sd, k=k, limit=limit)
