"""Savitzky-Golay filter: published coefficients and a slow least-squares oracle."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.signal import savgol_filter

from service.errors import InvalidInput
from service.spectra import SavitzkyGolay


# Source: Savitzky, A.; Golay, M. J. E. (1964) Anal. Chem. 36, 1627-1639, tables I and III
# (values as quoted in ../shared/domain.md).
@pytest.mark.parametrize(
    ("window", "polyorder", "deriv", "expected"),
    [
        (5, 2, 0, np.array([-3, 12, 17, 12, -3]) / 35),
        (7, 2, 0, np.array([-2, 3, 6, 7, 6, 3, -2]) / 21),
        (5, 2, 1, np.array([-2, -1, 0, 1, 2]) / 10),
    ],
)
def test_coefficients_match_savitzky_golay_1964(window, polyorder, deriv, expected) -> None:
    assert_allclose(SavitzkyGolay(window=window, polyorder=polyorder, deriv=deriv).weights, expected, atol=1e-12)


def _oracle(y: np.ndarray, window: int, polyorder: int, deriv: int, dx: float) -> np.ndarray:
    """Slow and obvious: fit a polynomial by least squares around every point (edges: first/last full window)."""
    n, h = y.size, window // 2
    out = np.empty(n)
    for i in range(n):
        start = min(max(i - h, 0), n - window)
        t = (np.arange(start, start + window) - i) * dx
        coef = np.polynomial.polynomial.polyfit(t, y[start:start + window], polyorder)
        der = np.polynomial.polynomial.polyder(coef, deriv) if deriv else coef
        out[i] = np.polynomial.polynomial.polyval(0.0, der)
    return out


@pytest.mark.parametrize(("window", "polyorder", "deriv"), [(5, 2, 0), (9, 2, 1), (11, 3, 2), (7, 4, 0), (15, 3, 1)])
def test_matches_explicit_least_squares_fit_per_window(window, polyorder, deriv) -> None:
    y = np.random.default_rng(window * 10 + deriv).normal(size=200).cumsum()
    dx = 0.5
    got = SavitzkyGolay(window=window, polyorder=polyorder, deriv=deriv).apply(y, dx=dx)
    assert_allclose(got, _oracle(y, window, polyorder, deriv, dx), rtol=1e-8, atol=1e-9)
    assert_allclose(got, savgol_filter(y, window, polyorder, deriv=deriv, delta=dx, mode="interp"), atol=1e-9)


def test_derivative_of_a_line_is_its_slope_per_x_unit() -> None:
    x = np.arange(400.0, 500.0, 2.0)
    got = SavitzkyGolay(window=7, polyorder=2, deriv=1).apply(3.0 * x + 1.0, dx=2.0)
    assert_allclose(got, 3.0, rtol=1e-10)


def test_input_is_not_modified() -> None:
    y = np.random.default_rng(1).normal(size=50)
    before = y.copy()
    y.setflags(write=False)
    SavitzkyGolay(window=9, polyorder=2).apply(y)
    assert_allclose(y, before, rtol=0, atol=0)


@pytest.mark.parametrize(("window", "polyorder", "deriv"), [(4, 2, 0), (5, 4, 0), (5, 2, 3), (1, 0, 0)])
def test_bad_parameters_are_refused(window, polyorder, deriv) -> None:
    with pytest.raises(InvalidInput):
        SavitzkyGolay(window=window, polyorder=polyorder, deriv=deriv)


def test_series_shorter_than_window_is_refused() -> None:
    with pytest.raises(InvalidInput, match="at least 9"):
        SavitzkyGolay(window=9, polyorder=2).apply(np.ones(5))
