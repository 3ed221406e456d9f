"""Baselines: rubber band against a slow convex-hull oracle; ASLS/arPLS recover a known baseline."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from service.errors import InvalidInput
from service.spectra import baseline_arpls, baseline_asls, baseline_rubberband


def _gauss(x, centre, fwhm, height):
    return height * np.exp(-4 * np.log(2) * ((x - centre) / fwhm) ** 2)


def _lower_hull_oracle(x, y):
    """Andrew's monotone chain, point by point (slow, obvious)."""
    hull: list[int] = []
    for i in range(x.size):
        while len(hull) >= 2:
            a, b = hull[-2], hull[-1]
            if (x[b] - x[a]) * (y[i] - y[a]) - (y[b] - y[a]) * (x[i] - x[a]) > 0:
                break
            hull.pop()
        hull.append(i)
    return np.interp(x, x[hull], y[hull])


@pytest.mark.parametrize("seed", range(6))
def test_rubberband_matches_monotone_chain_oracle(seed) -> None:
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(400, 4000, 800))
    x = np.unique(x)
    y = rng.normal(0, 0.01, x.size) + 1e-8 * (x - 2000) ** 2 + _gauss(x, 1700, 30, 1.0)
    if seed % 2:
        y = y + _gauss(x, 3000, 400, 0.5)
    got = baseline_rubberband(x, y)
    assert_allclose(got.baseline, _lower_hull_oracle(x, y), atol=1e-12)
    assert (got.corrected >= -1e-12).all()


def test_rubberband_under_a_convex_curve_is_the_curve() -> None:
    x = np.linspace(400, 4000, 500)
    y = 1e-7 * (x - 2200) ** 2
    assert_allclose(baseline_rubberband(x, y).corrected, 0.0, atol=1e-12)


def test_rubberband_of_a_straight_line() -> None:
    x = np.linspace(400, 4000, 100)
    res = baseline_rubberband(x, 0.5 + 1e-4 * x)
    assert_allclose(res.corrected, 0.0, atol=1e-12)


@pytest.mark.parametrize("method", ["asls", "arpls"])
def test_whittaker_baselines_recover_a_sloping_line_under_bands(method) -> None:
    x = np.arange(400.0, 4000.0, 1.0)
    line = 0.05 + 2e-5 * (x - 400)
    bands = _gauss(x, 1700, 20, 1.0) + _gauss(x, 2900, 40, 0.5) + _gauss(x, 1000, 15, 0.7)
    y = line + bands + np.random.default_rng(3).normal(0, 0.001, x.size)
    res = baseline_asls(y, lam=1e6, p=0.01) if method == "asls" else baseline_arpls(y, lam=1e6, max_iter=100)
    far = (np.abs(x - 1700) > 80) & (np.abs(x - 2900) > 150) & (np.abs(x - 1000) > 60)
    assert np.abs(res.baseline - line)[far].max() < 0.01
    assert abs(res.corrected[1300] - 1.0) < 0.02  # band at 1700 keeps its height
    assert res.iterations >= 1 and "lam" in res.params


def test_arpls_reports_when_it_stops_at_max_iter() -> None:
    x = np.arange(400.0, 4000.0, 1.0)
    y = _gauss(x, 1700, 20, 1.0) + np.random.default_rng(0).normal(0, 0.01, x.size)
    res = baseline_arpls(y, lam=1e5, max_iter=2, tol=1e-12)
    assert res.iterations <= 3  # pybaselines makes up to max_iter + 1 weighting passes
    assert res.converged is False
    assert res.params["max_iter"] == 2


def test_inputs_are_not_modified() -> None:
    x = np.linspace(400, 4000, 300)
    y = _gauss(x, 1700, 30, 1.0) + 1e-4 * x
    x0, y0 = x.copy(), y.copy()
    x.setflags(write=False)
    y.setflags(write=False)
    baseline_rubberband(x, y)
    baseline_asls(y)
    baseline_arpls(y, max_iter=5)
    assert_allclose(x, x0, rtol=0, atol=0)
    assert_allclose(y, y0, rtol=0, atol=0)


def test_bad_input_is_refused() -> None:
    with pytest.raises(InvalidInput):
        baseline_asls(np.array([1.0, np.nan, 2.0, 3.0, 4.0]))
    with pytest.raises(InvalidInput):
        baseline_asls(np.ones(100), p=1.5)
    with pytest.raises(InvalidInput):
        baseline_rubberband(np.arange(10.0)[::-1], np.ones(10))


def test_asls_matches_pybaselines_for_series_of_changing_length() -> None:
    """Our wrapper reuses one fitter per length: interleaved lengths must give pybaselines' own result."""
    from pybaselines import Baseline

    for n in (3600, 500, 3600, 1200, 500):
        y = np.random.default_rng(n).normal(size=n).cumsum()
        assert_allclose(baseline_asls(y).baseline, Baseline().asls(y, lam=1e5, p=0.01)[0], atol=1e-12)
        assert_allclose(baseline_arpls(y, max_iter=10).baseline,
                        Baseline().arpls(y, lam=1e5, max_iter=10)[0], atol=1e-12)


def test_asls_from_several_threads_gives_the_serial_results() -> None:
    from concurrent.futures import ThreadPoolExecutor

    series = [np.random.default_rng(s).normal(size=800).cumsum() for s in range(12)]
    serial = [baseline_asls(y).baseline for y in series]
    with ThreadPoolExecutor(max_workers=4) as pool:
        threaded = list(pool.map(lambda y: baseline_asls(y).baseline, series * 3))
    for i, got in enumerate(threaded):
        assert_allclose(got, serial[i % len(series)], atol=1e-12)


def _asls_dense_oracle(y: np.ndarray, lam: float, p: float, max_iter: int = 50, tol: float = 1e-3):
    """Eilers & Boelens (2005) as written: dense D, solve (W + lam DᵀD) z = W y, reweight, repeat."""
    n = y.size
    d = np.zeros((n - 2, n))
    for i in range(n - 2):
        d[i, i:i + 3] = (1.0, -2.0, 1.0)
    penalty = lam * (d.T @ d)
    w = np.ones(n)
    for i in range(max_iter + 1):
        z = np.linalg.solve(np.diag(w) + penalty, w * y)
        new = np.where(y > z, p, 1 - p)
        if np.linalg.norm(new - w) / np.linalg.norm(w) < tol:
            return z, i + 1
        w = new
    return z, max_iter + 1


@pytest.mark.parametrize("n", [4, 5, 9, 1800])
def test_second_difference_penalty_bands_are_those_of_lam_dt_d(n) -> None:
    from service.spectra.baseline import _second_difference_penalty

    d = np.diff(np.eye(n), n=2, axis=0)  # (n-2) x n second differences
    full = 3.5 * (d.T @ d)
    bands = _second_difference_penalty(n, 3.5)
    assert_allclose(bands[2], np.diag(full), rtol=0, atol=0)
    assert_allclose(bands[1, :-1], np.diag(full, 1), rtol=0, atol=0)
    assert_allclose(bands[0, :-2], np.diag(full, 2), rtol=0, atol=0)
    assert_allclose(bands[3, 1:], np.diag(full, -1), rtol=0, atol=0)
    assert_allclose(bands[4, 2:], np.diag(full, -2), rtol=0, atol=0)
    assert not bands.flags.writeable


@pytest.mark.parametrize("seed", range(4))
def test_asls_second_difference_matches_a_dense_oracle(seed) -> None:
    from service.spectra.baseline import asls_second_difference

    rng = np.random.default_rng(seed)
    x = np.linspace(400, 4000, 240)
    y = 0.1 + 1e-5 * x + _gauss(x, 1700, 60, 1.0) + _gauss(x, 2900, 200, 0.4) + rng.normal(0, 0.003, x.size)
    got, history = asls_second_difference(y, lam=1e3, p=0.01)
    want, passes = _asls_dense_oracle(y, 1e3, 0.01)
    assert history.size == passes
    assert_allclose(got, want, rtol=0, atol=1e-9)


@pytest.mark.parametrize(("n", "lam", "p", "max_iter"), [(1800, 1e6 / 16, 0.01, 50), (3600, 1e5, 0.01, 50),
                                                         (500, 1e7, 0.05, 3), (4, 10.0, 0.2, 50)])
def test_asls_second_difference_gives_pybaselines_result(n, lam, p, max_iter) -> None:
    """The direct loop on a cached penalty is pybaselines' iteration: same baseline, same number of passes."""
    from pybaselines import Baseline

    from service.spectra.baseline import asls_second_difference

    rng = np.random.default_rng(n)
    x = np.linspace(0.0, 1.0, n)
    y = 0.2 * x + 0.8 * np.exp(-(((x - 0.4) / 0.02) ** 2)) + rng.normal(0, 0.002, n)
    for data in (y, y[::-1].copy(), y * 3.0):  # and again: the cached penalty is reused, not changed
        base, history = asls_second_difference(data, lam=lam, p=p, max_iter=max_iter)
        want, info = Baseline(x_data=np.arange(n, dtype=float)).asls(data, lam=lam, p=p, max_iter=max_iter)
        assert_allclose(base, want, rtol=0, atol=1e-12 * float(np.abs(want).max()))
        assert_allclose(history, info["tol_history"], rtol=1e-12)
    if n >= 8:
        strided = y[::2]  # a strided view, as the evaluator passes
        base, _ = asls_second_difference(strided, lam=lam, p=p)
        assert_allclose(base, Baseline().asls(strided.copy(), lam=lam, p=p)[0], rtol=0, atol=1e-12)
