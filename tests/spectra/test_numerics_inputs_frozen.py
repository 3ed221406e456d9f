"""Every public numerical function works on read-only inputs and leaves them as they were (house style)."""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_array_equal

from service.spectra import (
    SavitzkyGolay,
    Spectrum,
    Step,
    assess_quality,
    atr_correct,
    baseline_arpls,
    baseline_asls,
    baseline_rubberband,
    cosine,
    crop,
    euclidean_distance,
    find_bands,
    first_derivative_correlation,
    mask_regions,
    normalise_minmax,
    normalise_snv,
    normalise_vector,
    pearson,
    resample,
    run_steps,
)


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a


def test_no_public_function_writes_to_its_inputs() -> None:
    x = _frozen(np.arange(400.0, 4000.0, 1.0))
    y = _frozen(0.02 + np.exp(-(((x - 1700) / 12) ** 2)) + 0.5 * np.exp(-(((x - 2900) / 30) ** 2)))
    z = _frozen(y[::-1].copy())
    x0, y0, z0 = x.copy(), y.copy(), z.copy()
    grid = _frozen(np.arange(500.0, 3000.0, 2.0))

    SavitzkyGolay(window=9, polyorder=2, deriv=1).apply(y, dx=1.0)
    baseline_asls(y)
    baseline_arpls(y, max_iter=5)
    baseline_rubberband(x, y)
    crop(x, y, lo=1000, hi=2000)
    resample(x, y, grid)
    normalise_vector(y)
    normalise_snv(y)
    normalise_minmax(y)
    atr_correct(x, y)
    mask_regions(x, exclude=[(2280, 2400)])
    find_bands(x, y, window=(1000, 3500), min_prominence=0.01)
    find_bands(x, y, min_prominence=0.01, position_method="centroid")
    pearson(y, z)
    cosine(y, z)
    first_derivative_correlation(y, z, mask=mask_regions(x, include=[(1500, 3200)]))
    euclidean_distance(y, z)
    run_steps(x, y, [Step("resample", {"lo": 500, "hi": 3000, "spacing": 2.0}), Step("baseline_rubberband"),
                     Step("derivative", {"window": 7, "polyorder": 2}), Step("normalise_vector")])
    assess_quality(Spectrum.create(x, y, "absorbance"))

    assert_array_equal(x, x0)
    assert_array_equal(y, y0)
    assert_array_equal(z, z0)
