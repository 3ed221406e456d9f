"""``evaluate(sample, spec, reference, library=None)``: the identity decision and its evidence.

The same method prepares sample and reference (Ph. Eur. 2.2.24, ASTM E1252); the prepared
reference and its check against the specification are cached by the hash of its data, the method
and the specification's digest, so a stream of samples against one reference pays its
preparation once. The verdict is ``invalid`` when the measurement cannot be
judged (quality, range, preparation), ``fail`` when any criterion fails, otherwise ``pass``.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from typing import Any

import numpy as np

from service import __version__
from service.evaluation.criteria import judge_forbidden, judge_required
from service.evaluation.library import ReferenceLibrary
from service.evaluation.method import (
    Method,
    Prepared,
    RangeNotCovered,
    as_absorbance,
    prepare,
    score,
    spectrum_facts,
)
from service.evaluation.result import Criterion, Evaluation, Match, Notice
from service.evaluation.sample_quality import judge_quality, quality_plan_for
from service.evaluation.specification import Specification
from service.spectra.model import Spectrum

__all__ = ["SCORE_WARNING_MARGIN", "evaluate", "clear_reference_cache"]

SCORE_WARNING_MARGIN = 0.005
_CACHE_SIZE = 64
_cache: OrderedDict[tuple[Any, ...], tuple[Prepared, tuple[Notice, ...]]] = OrderedDict()
_cache_lock = threading.Lock()


def clear_reference_cache() -> None:
    with _cache_lock:
        _cache.clear()


def _describe(s: Spectrum, digest: str, spacing: float) -> dict[str, Any]:
    return {"sha256_file": s.meta.sha256 or None, "sha256_data": digest, "file_name": s.meta.file_name or None,
            "title": s.meta.title or None, "points": s.n_points, "range_cm1": [s.range_cm1[1], s.range_cm1[0]],
            "spacing_cm1": spacing, "kind": s.kind.value, "notes": list(s.notes)}


def _prepared_reference(reference: Spectrum, digest: str, spec: Specification, method: Method
                        ) -> tuple[Prepared, tuple[Notice, ...]]:
    # the self-check reads the specification's band rules and quality limits: key on the whole document
    key = (digest, method, spec.digest())
    with _cache_lock:
        hit = _cache.get(key)
        if hit is not None:
            _cache.move_to_end(key)
            return hit
    prepared = prepare(reference, method, data_sha256=digest)
    entry = (prepared, _reference_self_check(prepared, spec))
    with _cache_lock:
        _cache[key] = entry
        while len(_cache) > _CACHE_SIZE:
            _cache.popitem(last=False)
    return entry


def _reference_self_check(ref: Prepared, spec: Specification) -> tuple[Notice, ...]:
    """The reference should meet its own specification (bands, saturation); if not, say so on every result."""
    out = []
    keep = ref.method.kept_mask
    top = float(ref.resampled[keep].max()) if keep.any() else float(ref.resampled.max())
    if top > spec.quality.max_absorbance:
        out.append(Notice(code="reference-saturated", message=(
            f"the reference reaches absorbance {top:.2f}, above the specification's {spec.quality.max_absorbance:g}: "
            "its strongest bands may be distorted; consider measuring a new reference")))
    for rule in spec.required_bands:
        c, _ = judge_required(ref, rule)
        if not c.passed:
            out.append(Notice(code="reference-disagrees", message=(
                f"the reference itself does not meet required band '{rule.label}' ({c.message}): "
                "check the specification against the reference")))
    for frule in spec.forbidden_bands:
        c, _ = judge_forbidden(ref, frule)
        if not c.passed:
            out.append(Notice(code="reference-disagrees", message=(
                f"the reference itself breaks forbidden band '{frule.label}' ({c.message}): "
                "check the specification against the reference")))
    return tuple(out)


def evaluate(sample: Spectrum, spec: Specification, reference: Spectrum, library: ReferenceLibrary | None = None,
             *, sample_preparation: str | None = None, reference_preparation: str | None = None,
             top: int = 5) -> Evaluation:
    """Test ``sample`` against ``spec`` and its approved ``reference`` (and, with ``library``, for mix-ups).

    Parameters
    ----------
    sample, reference
        Spectra in absorbance or transmittance; both are prepared by the same method.
    spec
        A parsed :class:`Specification`.
    library
        Approved references of other materials. Specificity (ICH Q2(R2)): if another material
        scores at least as well as the specified reference, the evaluation fails naming it.
    sample_preparation, reference_preparation
        How the spectra were obtained, when known; a preparation other than the specification's
        makes the evaluation invalid (USP <197>: preparation is part of the method).
    top
        How many library matches to report.
    """
    method = Method.for_specification(spec)
    criteria: list[Criterion] = []
    warnings: list[Notice] = []
    invalid: list[Notice] = []
    for who, prep in (("sample", sample_preparation), ("reference", reference_preparation)):
        if prep is not None and prep != spec.preparation:
            invalid.append(Notice(code="wrong-preparation", message=(
                f"the {who} was prepared as {prep} but the specification requires {spec.preparation}: "
                "sample and reference must be prepared the same way")))

    ref_facts, sample_facts = spectrum_facts(reference), spectrum_facts(sample)
    ref_digest, sample_digest = ref_facts.digest, sample_facts.digest
    ref: Prepared | None = None
    try:
        ref, ref_notices = _prepared_reference(reference, ref_digest, spec, method)
        warnings.extend(ref_notices)
    except RangeNotCovered as exc:
        invalid.append(Notice(code="reference-range", message=f"reference: {exc}; use a reference that covers it"))

    absorbance = as_absorbance(sample)
    prepared: Prepared | None = None
    try:
        prepared = prepare(absorbance, method, data_sha256=sample_digest)
    except RangeNotCovered as exc:
        invalid.append(Notice(code="wrong-range", message=f"sample: {exc}; measure over the full range"))

    matches: tuple[Match, ...] | None = None
    s_step, r_step = sample_facts.spacing, ref_facts.spacing
    if prepared is not None:
        plan = quality_plan_for(absorbance.x, method, axis_key=sample_facts.axis_key)
        q_criteria, q_warnings, q_invalid = judge_quality(absorbance, prepared, spec, plan=plan)
        criteria += q_criteria
        warnings += q_warnings
        invalid += q_invalid
        for rule in spec.required_bands:
            c, notes = judge_required(prepared, rule)
            criteria.append(c)
            warnings += notes
        for frule in spec.forbidden_bands:
            c, notes = judge_forbidden(prepared, frule)
            criteria.append(c)
            warnings += notes
        if ref is not None:
            own = score(prepared.vector, ref.vector, method.metric)
            if spec.fingerprint is not None:
                criteria.append(_fingerprint_criterion(own, spec, method, warnings))
            if library is not None:
                c, matches = _specificity(prepared, own, spec, library, method, top)
                criteria.append(c)
            if abs(s_step - r_step) > 0.5 * max(s_step, r_step):
                warnings.append(Notice(code="different-spacing", message=(
                    f"sample point spacing {s_step:.2f} cm⁻¹ differs from the reference's "
                    f"{r_step:.2f} cm⁻¹: compare spectra recorded under the same conditions")))

    verdict = "invalid" if invalid else ("fail" if any(not c.passed for c in criteria) else "pass")
    return Evaluation(
        verdict=verdict, criteria=tuple(criteria), warnings=tuple(warnings), invalid_reasons=tuple(invalid),
        specification={"material": spec.material, "name": spec.name, "version": spec.version,
                       "sha256": spec.digest(), "document": spec.as_document()},
        sample=_describe(sample, sample_digest, s_step), reference=_describe(reference, ref_digest, r_step),
        preprocessing=method.as_dict(), excluded_regions=tuple(r.as_dict() for r in spec.excluded_regions()),
        matches=matches, software={"name": "bandgate", "version": __version__},
    )


def _fingerprint_criterion(own: float, spec: Specification, method: Method, warnings: list[Notice]) -> Criterion:
    fp = spec.fingerprint
    assert fp is not None
    limit = fp.limit
    ok = own >= limit if fp.higher_is_better else own <= limit
    name = {"pearson": "Pearson correlation", "first-derivative": "first-derivative (Savitzky-Golay) correlation",
            "euclidean": "Euclidean distance of vector-normalised spectra"}[fp.metric]
    if abs(own - limit) <= SCORE_WARNING_MARGIN:
        warnings.append(Notice(code="score-near-limit", message=(
            f"{name} {own:.4f} lies within {SCORE_WARNING_MARGIN:g} of its limit {limit:g}")))
    return Criterion(kind="fingerprint", label=f"fingerprint: {name}", outcome="pass" if ok else "fail",
                     measured=own, limit=limit, comparison=">=" if fp.higher_is_better else "<=",
                     unit="correlation" if fp.higher_is_better else "distance",
                     message=f"{name} with the reference {own:.4f} ({'meets' if ok else 'misses'} {limit:g})",
                     details={"metric": fp.metric, "compared_points": int(method.compared.size)})


def _specificity(prepared: Prepared, own: float, spec: Specification, library: ReferenceLibrary, method: Method,
                 top: int) -> tuple[Criterion, tuple[Match, ...]]:
    view = library.view(method)
    higher = method.metric != "euclidean"
    scores = view.scores(prepared.vector)
    order = np.argsort(scores if not higher else -scores, kind="stable").tolist()  # the full ranking, best first
    codes = view.codes

    def match(rank: int, i: int) -> Match:
        return Match(rank=rank, material=codes[i], score=float(scores[i]), metric=method.metric)

    first_other = next((r for r, i in enumerate(order) if codes[i] != spec.material), None)
    best = None if first_other is None else match(first_other + 1, order[first_other])
    mixed = best is not None and (best.score >= own if higher else best.score <= own)
    details: dict[str, Any] = {
        "specified_reference_score": own, "metric": method.metric, "library_size": len(view),
        "closest_other_material": best.material if best else None,
        "closest_other_score": best.score if best else None, "skipped_references": list(view.skipped),
    }
    if best is None:
        msg, measured = "the library holds no other material to compare with", None
    else:
        measured = own - best.score if higher else best.score - own
        msg = (f"{best.material} scores {best.score:.4f}, {'at least as well as' if mixed else 'below'} the "
               f"specified reference ({own:.4f})" if higher else
               f"{best.material} lies at distance {best.score:.4f}, "
               f"{'as close as or closer than' if mixed else 'further than'} "
               f"the specified reference ({own:.4f})")
        if mixed:
            msg = f"possible mix-up: {msg}"
    crit = Criterion(kind="specificity", label="specificity (mix-up check against the library)",
                     outcome="fail" if mixed else "pass", measured=measured, limit=0.0, comparison=">",
                     unit="score margin over the closest other material", message=msg, details=details)
    return crit, tuple(match(r + 1, i) for r, i in enumerate(order[:top]))
