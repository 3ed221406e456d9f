"""What is worked out once per axis (spacing, the quality checks' index ranges) against slow, obvious versions.

Oracles: ``np.median`` for the spacing; for the index ranges, the segment walk the quality checks
used to run on every spectrum (written out again here), and the noise and water-vapour look-ups
by ``searchsorted`` on the spot. The caches must never answer for another axis or method.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from evaluation_factories import ESTER_BANDS, synthetic
from numpy.testing import assert_array_equal

from service.evaluation import Method, evaluate, parse_specification, prepare
from service.evaluation import _axis as axis
from service.evaluation.method import spectrum_facts
from service.evaluation.sample_quality import (
    NOISE_REGION_CM1,
    WATER_VAPOUR_REGION_CM1,
    judge_quality,
    quality_plan_for,
)
from service.spectra import Spectrum


def _highest_oracle(x, y, lo, hi, excluded):  # type: ignore[no-untyped-def]
    """Highest original point in lo–hi outside the excluded intervals, walking the segments between them."""
    edges = sorted((a, b) for a, b in excluded if b > lo and a < hi)
    best, where, start = -np.inf, float("nan"), lo
    for a, b in edges + [(hi, hi)]:
        i0, i1 = int(np.searchsorted(x, start)), int(np.searchsorted(x, a, side="right"))
        if i1 > i0:
            k = i0 + int(np.argmax(y[i0:i1]))
            if y[k] > best:
                best, where = float(y[k]), float(x[k])
        start = max(start, b)
    return (best if np.isfinite(best) else float("nan")), where


def _vapour_oracle(x, lo, hi):  # type: ignore[no-untyped-def]
    a, b = max(WATER_VAPOUR_REGION_CM1[0], lo), min(WATER_VAPOUR_REGION_CM1[1], hi)
    i0, i1 = int(np.searchsorted(x, a)), int(np.searchsorted(x, b, side="right"))
    if i1 - i0 < 30:
        return None
    step = float(x[i1 - 1] - x[i0]) / (i1 - i0 - 1)
    window = max(5, int(round(25.0 / step)) | 1)
    return None if window >= i1 - i0 or step > 8.0 else (i0, i1, window)


def _noise_oracle(x, lo, hi):  # type: ignore[no-untyped-def]
    n_lo, n_hi = NOISE_REGION_CM1
    if not (n_lo >= lo and n_hi <= hi):
        return None
    i0, i1 = int(np.searchsorted(x, n_lo)), int(np.searchsorted(x, n_hi, side="right"))
    return (i0, i1) if i1 - i0 >= 10 else None


@pytest.mark.parametrize("n", [2, 3, 4, 7, 3599, 3600])
def test_median_is_numpys_median(n: int) -> None:
    rng = np.random.default_rng(n)
    for values in (rng.normal(size=n), np.round(rng.normal(size=n), 1), np.full(n, 0.9643)):
        assert axis.median(values) == float(np.median(values))


AXES = {
    "1 cm-1": np.arange(400.0, 4000.5, 1.0),
    "1.929 cm-1, ragged": np.cumsum(np.r_[399.0, np.random.default_rng(0).uniform(1.9, 1.96, 1866)]),
    "4 cm-1": np.arange(650.0, 4000.0, 4.0),
    "8.5 cm-1": np.arange(600.0, 4000.0, 8.5),
    "short": np.arange(1000.0, 3000.0, 2.0),
}
RANGES = [(401.0, 4000.0, ((3650.0, 3950.0), (2280.0, 2400.0), (655.0, 680.0))),
          (650.0, 3800.0, ((1000.0, 1100.0), (1050.0, 1200.0), (3000.0, 3000.5))),
          (700.0, 3900.0, ()),
          (1500.0, 2500.0, ((1400.0, 1600.0), (2000.0, 2200.0)))]


@pytest.mark.parametrize("name", sorted(AXES))
@pytest.mark.parametrize("lo, hi, excluded", RANGES)
def test_quality_plan_matches_the_look_ups_done_on_the_spot(name: str, lo: float, hi: float, excluded) -> None:
    x = AXES[name]
    method = Method(lo=lo, hi=hi, excluded=excluded)
    plan = quality_plan_for(x, method)
    assert plan.noise == _noise_oracle(x, lo, hi)
    assert plan.vapour == _vapour_oracle(x, lo, hi)
    rng = np.random.default_rng(len(x))
    for y in (rng.normal(size=x.size), np.round(rng.normal(size=x.size), 0), np.zeros(x.size)):  # ties too
        want = _highest_oracle(x, y, lo, hi, excluded)
        if plan.highest.size:
            i = int(plan.highest[int(np.argmax(y[plan.highest]))])
            assert (float(y[i]), float(x[i])) == want
        else:
            assert np.isnan(want[0]) and np.isnan(want[1])


def test_quality_plans_are_remembered_per_axis_and_method_and_never_mixed_up() -> None:
    axis.clear()
    x1, x2 = AXES["1 cm-1"], AXES["4 cm-1"]
    m1, m2 = Method(lo=401.0, hi=4000.0), Method(lo=700.0, hi=3900.0, excluded=((2280.0, 2400.0),))
    k1 = spectrum_facts(Spectrum.create(x1, np.zeros(x1.size), "absorbance")).axis_key
    k2 = spectrum_facts(Spectrum.create(x2, np.zeros(x2.size), "absorbance")).axis_key
    assert k1 != k2
    plans = {(k, m): quality_plan_for(x, m, axis_key=k) for k, x in ((k1, x1), (k2, x2)) for m in (m1, m2)}
    for (k, m), plan in plans.items():
        x = x1 if k == k1 else x2
        assert quality_plan_for(x, m, axis_key=k) is plan  # remembered
        fresh = quality_plan_for(x, m)  # worked out again, uncached
        assert_array_equal(plan.highest, fresh.highest)
        assert (plan.noise, plan.vapour) == (fresh.noise, fresh.vapour)
    assert len({id(p) for p in plans.values()}) == 4
    for i in range(3 * axis._SIZE):  # bounded
        quality_plan_for(x1, Method(lo=401.0 + i, hi=4000.0), axis_key=k1)
    assert len(axis._plans) <= axis._SIZE


def test_the_axis_key_depends_on_the_axis_values_only() -> None:
    x = np.arange(600.0, 4000.0, 1.0)
    a = spectrum_facts(Spectrum.create(x, np.ones(x.size), "absorbance"))
    b = spectrum_facts(Spectrum.create(x.copy(), np.zeros(x.size), "absorbance"))
    c = spectrum_facts(Spectrum.create(x + 1e-9, np.ones(x.size), "absorbance"))
    assert a.axis_key == b.axis_key and a.digest != b.digest
    assert c.axis_key != a.axis_key
    assert a.spacing == b.spacing == float(np.median(np.diff(x)))


def test_judge_quality_with_a_remembered_plan_equals_judging_from_scratch() -> None:
    spec = parse_specification({"material": "SYN", "name": "synthetic ester", "version": 1,
                                "preparation": "atr-znse", "range": [3990, 650],
                                "fingerprint": {"metric": "pearson", "min_score": 0.9}})
    method = Method.for_specification(spec)
    sample = synthetic(ESTER_BANDS + [(3800.0, 0.02, 1.5), (3760.0, 0.02, 1.5)], seed=4, noise=0.004)
    prepared = prepare(sample, method)
    key = spectrum_facts(sample).axis_key
    fresh = judge_quality(sample, prepared, spec)
    remembered = judge_quality(sample, prepared, spec, plan=quality_plan_for(sample.x, method, axis_key=key))
    assert fresh == remembered
    assert any(c.label == "signal-to-noise" for c in fresh[0])


def test_a_new_object_on_a_known_axis_gets_the_same_record() -> None:
    spec = parse_specification({"material": "SYN", "name": "synthetic ester", "version": 1,
                                "preparation": "atr-znse", "range": [3800, 650],
                                "fingerprint": {"metric": "pearson", "min_score": 0.9}})
    sample, reference = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS, seed=2)
    axis.clear()
    first = evaluate(sample, spec, reference).as_dict()
    again = evaluate(replace(sample), spec, reference).as_dict()  # new object: digest again, axis remembered
    assert first == again


def _sha256_oracle(kind: str, x: np.ndarray, y: np.ndarray) -> str:
    """The data digest as documented: SHA-256 of the kind (UTF-8), then x and y as little-endian float64."""
    import hashlib

    return hashlib.sha256(kind.encode() + np.asarray(x, "<f8").tobytes() + np.asarray(y, "<f8").tobytes()).hexdigest()


def test_the_remembered_axis_hash_gives_the_documented_digest_and_never_another_axis() -> None:
    axis.clear()
    rng = np.random.default_rng(3)
    x = np.arange(600.0, 4000.0, 1.0)
    moved = x.copy()
    moved[1000] += 1e-9  # same kind, length, first and last value: must not take up the remembered state
    cases = [(x, rng.normal(size=x.size)), (x.copy(), rng.normal(size=x.size)), (moved, np.zeros(x.size)),
             (x, np.ones(x.size)), (moved, np.ones(x.size))]
    for kind in ("absorbance", "transmittance"):
        for xs, ys in cases:
            s = Spectrum.create(xs, ys, kind)
            facts = spectrum_facts(s)
            assert facts.digest == _sha256_oracle(kind, xs, ys)
            assert facts.axis_key == bytes.fromhex(_sha256_oracle(kind, xs, np.zeros(0)))
    raw = np.array([0.0, 1.0, 2.0, 3.0])
    h1, k1 = axis.axis_hash("absorbance", raw)
    h2, k2 = axis.axis_hash("absorbance", np.array([0.0, 1.0, -0.0, 3.0]))  # equal as numbers, not as bits
    assert k1 != k2 and h1 is not h2
    h3, k3 = axis.axis_hash("absorbance", raw)
    assert k3 == k1 and h3.digest() == k1  # a fresh object, still at the end of the axis
    h3.update(b"more")
    assert axis.axis_hash("absorbance", raw)[0].digest() == k1  # the remembered state was not moved on
