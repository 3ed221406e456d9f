"""Similarity metrics: published check values, oracles, and what each metric ignores."""

from __future__ import annotations

import numpy as np
import pytest

from service.errors import InvalidInput
from service.spectra import cosine, euclidean_distance, first_derivative_correlation, mask_regions, pearson


def test_pearson_and_cosine_check_values() -> None:
    # ../shared/domain.md: [1,2,3,4] vs [2,4,6,8.5] -> Pearson r = 0.99838, cosine = 0.99955
    a, b = [1, 2, 3, 4], [2, 4, 6, 8.5]
    assert pearson(a, b) == pytest.approx(0.99838, abs=5e-6)
    assert cosine(a, b) == pytest.approx(0.99955, abs=5e-6)


def test_pearson_matches_numpy_corrcoef() -> None:
    rng = np.random.default_rng(4)
    for _ in range(5):
        a, b = rng.normal(size=300), rng.normal(size=300)
        b = a + 0.5 * b
        assert pearson(a, b) == pytest.approx(np.corrcoef(a, b)[0, 1], abs=1e-12)


def test_offset_and_scale() -> None:
    x = np.arange(400.0, 4000.0, 1.0)
    a = np.exp(-((x - 1700) / 15) ** 2) + np.exp(-((x - 2900) / 30) ** 2)
    b = 3.0 * a + 0.4
    assert pearson(a, b) == pytest.approx(1.0)
    assert first_derivative_correlation(a, b) == pytest.approx(1.0)
    assert cosine(a, b) < 0.9  # not centred: the offset lowers it
    assert euclidean_distance(a, 3.0 * a) == pytest.approx(0.0, abs=1e-12)
    assert euclidean_distance(a, -a) == pytest.approx(2.0)


def test_first_derivative_correlation_ignores_a_sloping_baseline_more_than_pearson() -> None:
    x = np.arange(400.0, 4000.0, 1.0)
    a = np.exp(-((x - 1700) / 15) ** 2) + np.exp(-((x - 2900) / 30) ** 2)
    b = a + 3e-4 * (x - 400)
    assert first_derivative_correlation(a, b) > pearson(a, b) + 0.1


def test_mask_restricts_the_comparison() -> None:
    x = np.arange(400.0, 4000.0, 1.0)
    a = np.exp(-((x - 1700) / 15) ** 2)
    b = a + np.exp(-((x - 2340) / 10) ** 2)  # an extra band only in the CO₂ region
    use = mask_regions(x, exclude=[(2280, 2400)])
    assert pearson(a, b, mask=use) == pytest.approx(1.0)
    assert pearson(a, b) < 0.9


def test_errors() -> None:
    with pytest.raises(InvalidInput, match="same axis"):
        pearson([1, 2, 3], [1, 2])
    with pytest.raises(InvalidInput, match="constant"):
        pearson([1, 1, 1, 1], [1, 2, 3, 4])


def _pearson_oracle(a, b):
    """Textbook formula, term by term in plain Python."""
    n = len(a)
    ma, mb = sum(a) / n, sum(b) / n
    cov = sum((p - ma) * (q - mb) for p, q in zip(a, b))
    va = sum((p - ma) ** 2 for p in a)
    vb = sum((q - mb) ** 2 for q in b)
    return cov / (va * vb) ** 0.5


def test_pearson_and_euclidean_against_plain_python_oracles() -> None:
    rng = np.random.default_rng(11)
    a = rng.normal(size=500)
    b = 0.7 * a + rng.normal(size=500)
    assert pearson(a, b) == pytest.approx(_pearson_oracle(a.tolist(), b.tolist()), abs=1e-12)
    na, nb = sum(v * v for v in a) ** 0.5, sum(v * v for v in b) ** 0.5
    expected = sum((p / na - q / nb) ** 2 for p, q in zip(a, b)) ** 0.5
    assert euclidean_distance(a, b) == pytest.approx(expected, abs=1e-12)
