"""Spectral numerics: preprocessing plus band measurement of one 3,600-point spectrum, and each step.

Data are generated (seeded): a synthetic absorbance spectrum, 400-3999 cm⁻¹ on a slightly
irregular axis (as an instrument export after unit conversion), with 14 bands, a sloping baseline
and noise.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from service.bench import BenchCase, BenchReport, BenchResult

N_POINTS = 3600
_BANDS = ((3350, 250, 0.35), (3060, 12, 0.12), (2925, 25, 0.6), (2855, 18, 0.4), (2230, 10, 0.2),
          (1715, 20, 0.9), (1601, 8, 0.3), (1490, 10, 0.35), (1450, 15, 0.3), (1375, 12, 0.25),
          (1250, 30, 0.5), (1100, 25, 0.55), (1028, 10, 0.3), (750, 12, 0.45))


def _spectrum() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(20261202)
    x = np.linspace(400.0, 3999.0, N_POINTS) + rng.uniform(-0.2, 0.2, N_POINTS)
    x.sort()
    y = 0.03 + 2e-5 * (x - 400) + rng.normal(0, 0.0008, N_POINTS)
    for c, w, h in _BANDS:
        y = y + h * np.exp(-4 * np.log(2) * ((x - c) / w) ** 2)
    return x, y




def _steps(baseline: str) -> list[Any]:
    from service.spectra import Step

    return [
        Step("resample", {"lo": 401.0, "hi": 3998.0, "spacing": 1.0}),
        Step(baseline, {"lam": 1e5, "p": 0.01} if baseline == "baseline_asls" else {}),
        Step("smooth", {"window": 9, "polyorder": 2}),
    ]


def _setup_chain(baseline: str) -> Any:
    def setup() -> Any:
        x, y = _spectrum()
        return x, y, _steps(baseline)
    return setup


def _chain(arg: Any) -> None:
    from service.spectra import find_bands, run_steps

    x, y, steps = arg
    out = run_steps(x, y, steps)
    find_bands(out.x, out.y, window=(600.0, 3900.0), min_prominence=0.02)


def _setup_uniform() -> Any:
    x, y = _spectrum()
    grid = np.arange(400.0, 4000.0, 1.0)
    return grid, np.interp(grid, x, y)


def _setup_pair() -> Any:
    from service.spectra import SavitzkyGolay

    grid, y = _setup_uniform()
    rng = np.random.default_rng(7)
    return y, y * 1.05 + 0.01 + rng.normal(0, 0.001, y.size), SavitzkyGolay(window=9, polyorder=2)


def _setup_spectrum() -> Any:
    from service.spectra import Spectrum

    grid, y = _setup_uniform()
    return Spectrum.create(grid, y, "absorbance")


def _setup_polystyrene() -> Any:
    """A synthetic polystyrene-like film: bands at the Ph. Eur. 2.2.24 positions."""
    from service.spectra import Spectrum

    x = np.arange(400.0, 4000.0, 1.0)
    y = 0.05 + np.random.default_rng(3).normal(0, 0.001, x.size)
    for c, h in ((3082.0, 0.7), (3060.0, 1.0), (3026.0, 1.2), (2923.0, 1.5), (2849.5, 1.0), (1942.9, 0.2),
                 (1601.2, 0.9), (1583.0, 0.35), (1493.0, 1.2), (1452.0, 1.1), (1154.5, 0.25), (1028.3, 0.6)):
        y = y + h * np.exp(-4 * np.log(2) * ((x - c) / 6.0) ** 2)
    return Spectrum.create(x, y, "absorbance")


def _cpu_report(name: str, baseline: str, repeats: int = 200) -> BenchReport:
    """CPU time of the chain (this thread only): on a machine shared with other work the wall-clock
    median includes time spent waiting for a core; the thread's CPU time does not."""
    import statistics
    import time

    arg = _setup_chain(baseline)()
    _chain(arg)
    samples = []
    for _ in range(repeats):
        t0 = time.thread_time()
        _chain(arg)
        samples.append((time.thread_time() - t0) * 1e3)
    q = statistics.quantiles(samples, n=10)
    return BenchReport(name, {"cpu_median_ms": round(statistics.median(samples), 4), "cpu_p10_ms": round(q[0], 4),
                              "cpu_p90_ms": round(q[-1], 4), "repeats": repeats}, aim="< 2 ms median")


def cases() -> list[BenchCase | BenchReport]:
    from scipy.signal import savgol_filter
    from scipy.stats import pearsonr

    from service.spectra import (
        assess_quality,
        baseline_arpls,
        baseline_asls,
        baseline_rubberband,
        check_polystyrene,
        find_bands,
        first_derivative_correlation,
        pearson,
        resample,
    )

    return [
        _cpu_report("preprocess + bands, ASLS chain, thread CPU time", "baseline_asls"),
        _cpu_report("preprocess + bands, rubber-band chain, thread CPU time", "baseline_rubberband"),
        BenchCase("preprocess + bands, 3,600 points (resample, ASLS, Savitzky-Golay, find_bands)", _chain,
                  setup=_setup_chain("baseline_asls"), repeats=100, aim="< 2 ms median"),
        BenchCase("preprocess + bands, 3,600 points (resample, rubber band, Savitzky-Golay, find_bands)", _chain,
                  setup=_setup_chain("baseline_rubberband"), repeats=100, aim="< 2 ms median"),
        BenchCase("resample onto 1 cm⁻¹ grid", lambda a: resample(a[0], a[1], np.arange(401.0, 3999.0, 1.0)),
                  setup=_spectrum, repeats=50),
        BenchCase("baseline_asls (lam 1e5, p 0.01)", lambda a: baseline_asls(a[1], lam=1e5, p=0.01),
                  setup=_setup_uniform, repeats=30),
        BenchCase("baseline_arpls (lam 1e5, max_iter 50)", lambda a: baseline_arpls(a[1], lam=1e5, max_iter=50),
                  setup=_setup_uniform, repeats=10),
        BenchCase("baseline_rubberband", lambda a: baseline_rubberband(a[0], a[1]), setup=_setup_uniform,
                  repeats=30),
        BenchCase("SavitzkyGolay(9, 2).apply (precomputed)", lambda a: a[2].apply(a[0]), setup=_setup_pair,
                  repeats=100),
        BenchCase("scipy savgol_filter(9, 2) (reference)", lambda a: savgol_filter(a[0], 9, 2), setup=_setup_pair,
                  repeats=100),
        BenchCase("pearson (centre + dot)", lambda a: pearson(a[0], a[1]), setup=_setup_pair, repeats=100),
        BenchCase("scipy.stats.pearsonr (reference)", lambda a: pearsonr(a[0], a[1]), setup=_setup_pair,
                  repeats=100),
        BenchCase("first_derivative_correlation", lambda a: first_derivative_correlation(a[0], a[1]),
                  setup=_setup_pair, repeats=100),
        BenchCase("find_bands (whole range)", lambda a: find_bands(a[0], a[1], min_prominence=0.02),
                  setup=_setup_uniform, repeats=50),
        BenchCase("assess_quality", assess_quality, setup=_setup_spectrum, repeats=20),
        BenchCase("check_polystyrene", check_polystyrene, setup=_setup_polystyrene, repeats=30),
    ]


def derived(results: dict[str, BenchResult]) -> list[dict[str, Any]]:
    rows = []
    pairs = (("SavitzkyGolay speed-up over savgol_filter", "scipy savgol_filter(9, 2) (reference)",
              "SavitzkyGolay(9, 2).apply (precomputed)"),
             ("pearson speed-up over scipy.stats.pearsonr", "scipy.stats.pearsonr (reference)",
              "pearson (centre + dot)"))
    for name, slow, fast in pairs:
        if slow in results and fast in results and results[fast].median_ms > 0:
            rows.append({"name": name, "ratio": round(results[slow].median_ms / results[fast].median_ms, 1)})
    return rows
