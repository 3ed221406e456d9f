"""The method's shortcuts agree with the spectral core's plain similarity functions (oracles)."""

from __future__ import annotations

import statistics

import numpy as np
import pytest
from evaluation_factories import ESTER_BANDS, synthetic

from service.evaluation import Method, clear_reference_cache, evaluate, parse_specification, prepare
from service.evaluation.limits import derive_limit
from service.evaluation.method import score
from service.spectra import SavitzkyGolay, euclidean_distance, first_derivative_correlation, pearson

EXCLUDED = ((2280.0, 2400.0), (3650.0, 3950.0))


@pytest.mark.parametrize("metric", ["pearson", "first-derivative", "euclidean"])
def test_dot_product_scores_equal_the_core_metrics(metric: str) -> None:
    m = Method(lo=650.0, hi=3800.0, metric=metric, excluded=EXCLUDED, regions=((650.0, 1800.0), (2800.0, 3800.0)))
    a, b = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS[:-2] + [(1100.0, 0.3, 30.0)], seed=2)
    pa, pb = prepare(a, m), prepare(b, m)
    mask = np.zeros(m.grid.size, dtype=bool)
    mask[m.compared] = True
    if metric == "pearson":
        expected = pearson(pa.final, pb.final, mask=mask)
    elif metric == "first-derivative":
        sg = SavitzkyGolay(window=m.derivative_window, polyorder=m.derivative_polyorder, deriv=1)
        expected = first_derivative_correlation(pa.final, pb.final, mask=mask, derivative=sg)
    else:
        expected = euclidean_distance(pa.final, pb.final, mask=mask)
    assert score(pa.vector, pb.vector, metric) == pytest.approx(expected, abs=1e-9)


def test_compared_points_leave_out_exclusions_and_keep_to_regions() -> None:
    m = Method(lo=650.0, hi=3800.0, excluded=EXCLUDED, regions=((650.0, 1800.0), (2200.0, 3800.0)))
    g = m.grid[m.compared]
    assert g.min() == 650.0 and g.max() < 3650.0
    assert not ((g > 1800.0) & (g < 2200.0)).any()
    assert not ((g >= 2280.0) & (g <= 2400.0)).any()


def test_derived_limit_is_mean_minus_k_sd_of_the_authentic_scores() -> None:
    # common practice (../shared/domain.md, Match limits): limit = mean - k·sd of authentic-lot scores
    spec = parse_specification({"material": "L", "name": "limit test (synthetic)", "version": 1,
                                "preparation": "kbr-disc", "range": [3800, 650],
                                "fingerprint": {"metric": "pearson", "min_score": 0.9}})
    reference = synthetic(ESTER_BANDS, seed=0)
    authentic = [synthetic(ESTER_BANDS, seed=s, noise=0.004) for s in range(1, 7)]
    d = derive_limit(authentic, reference, spec, k=2.0)
    m = Method.for_specification(spec)
    by_hand = [pearson(prepare(s, m).final, prepare(reference, m).final, mask=_mask(m)) for s in authentic]
    assert d.scores == pytest.approx(by_hand, abs=1e-9)
    assert d.limit == pytest.approx(statistics.fmean(by_hand) - 2.0 * statistics.stdev(by_hand), abs=1e-12)
    with pytest.raises(ValueError):
        derive_limit(authentic[:2], reference, spec)


def _mask(m: Method) -> np.ndarray:
    mask = np.zeros(m.grid.size, dtype=bool)
    mask[m.compared] = True
    return mask


def test_a_cached_reference_gives_the_same_record_as_a_fresh_one() -> None:
    spec = parse_specification({"material": "C", "name": "cache test (synthetic)", "version": 1,
                                "preparation": "atr-znse", "range": [3800, 650],
                                "required_bands": [{"label": "C=O", "from": 1750, "to": 1735}],
                                "fingerprint": {"metric": "first-derivative", "min_score": 0.9}})
    sample, reference = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS, seed=2)
    clear_reference_cache()
    fresh = evaluate(sample, spec, reference).as_dict()
    warm = evaluate(sample, spec, reference).as_dict()
    assert fresh == warm


@pytest.mark.parametrize(("lo", "hi"), [(2210.0, 2260.0), (2200.0, 2300.0), (2300.0, 2350.0), (650.0, 3800.0),
                                        (3649.5, 3700.0), (100.0, 200.0)])
def test_kept_indices_of_a_window_are_the_points_checked_one_by_one(lo: float, hi: float) -> None:
    m = Method(lo=650.0, hi=3800.0, excluded=EXCLUDED)
    want = [i for i, g in enumerate(m.grid.tolist())
            if lo <= g <= hi and not any(a <= g <= b for a, b in EXCLUDED)]
    assert m.kept_between(lo, hi).tolist() == want
    assert m.kept_between(lo, hi) is m.kept_between(lo, hi)  # remembered
    assert not m.kept_between(lo, hi).flags.writeable and not m.kept_mask.flags.writeable
    other = Method(lo=650.0, hi=3800.0, excluded=())  # another method: its own answer
    assert other.kept_between(lo, hi).tolist() == [i for i, g in enumerate(other.grid.tolist()) if lo <= g <= hi]


@pytest.mark.parametrize("size", [1, 2, 7, 128, 3151, 100_001])
def test_mean_and_norm_are_numpys_bit_for_bit(size: int) -> None:
    """The hot path's ``mean`` and ``norm`` give exactly ``np.mean`` and ``np.linalg.norm`` (the oracles)."""
    from service.evaluation._kernels import mean, norm

    rng = np.random.default_rng(size)
    for v in (rng.normal(0.3, 2.0, size), rng.uniform(-1e-3, 1e-3, size) + 1e4, np.full(size, 0.1)):
        assert mean(v) == float(np.mean(v)) and norm(v) == float(np.linalg.norm(v))
        assert mean(v[::3]) == float(np.mean(v[::3])) and norm(v[::3]) == float(np.linalg.norm(v[::3]))
