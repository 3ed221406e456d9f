"""Thin adapters from the evaluator's fixed grid to the spectral core (``service.spectra``).

The evaluator runs on one evenly spaced grid per method, so the objects that depend only on the
grid (Savitzky–Golay coefficients) are built once and cached; the rest are the core's own
functions. Only the noise estimate and the vector normalisations are local: they are a few
lines each on the hot path.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np
from numpy.typing import NDArray

from service.spectra import Band, SavitzkyGolay, baseline_asls, baseline_rubberband, find_bands

F64 = NDArray[np.float64]

__all__ = ["Band", "bands_in_window", "baseline", "centred_unit", "noise_rms", "savgol_derivative", "unit"]


def baseline(x: F64, y: F64, *, method: str, lam: float, p: float) -> F64:
    """The baseline under ``y``: asymmetric least squares (Eilers & Boelens 2005), rubber band, or none (zeros)."""
    if method == "asls":
        return baseline_asls(y, lam=lam, p=p).baseline
    if method == "rubberband":
        return baseline_rubberband(x, y).baseline
    return np.zeros_like(y)


@lru_cache(maxsize=32)
def _savgol(window: int, polyorder: int) -> SavitzkyGolay:
    return SavitzkyGolay(window=window, polyorder=polyorder, deriv=1)


def savgol_derivative(y: F64, *, window: int, polyorder: int, step: float) -> F64:
    """First derivative by Savitzky–Golay (1964) with precomputed coefficients."""
    return _savgol(window, polyorder).apply(y, step)


def bands_in_window(x: F64, y: F64, *, lo: float, hi: float, reference_height: float,
                    min_relative_prominence: float = 0.01) -> list[Band]:
    """Bands whose maximum lies inside ``lo``–``hi``, strongest first.

    The search runs over the window widened on both sides (by the window's width, at least
    60 cm⁻¹), so a broad band filling a narrow window keeps its true local baseline; bands whose
    maximum falls outside the window are then dropped.
    """
    if reference_height <= 0:
        return []
    pad = max(60.0, hi - lo)
    found = find_bands(x, y, window=(max(lo - pad, float(x[0])), min(hi + pad, float(x[-1]))),
                       min_prominence=min_relative_prominence * reference_height, reference_height=reference_height)
    inside = [b for b in found if lo <= b.position_cm1 <= hi]
    inside.sort(key=lambda b: -b.height)
    return inside


def strongest_band_height(x: F64, y: F64, keep: NDArray[np.bool_], *, min_prominence: float) -> float:
    """Height (above its local baseline) of the strongest band whose maximum lies where ``keep`` is true."""
    found = find_bands(x, y, min_prominence=min_prominence)
    heights = [b.height for b in found if keep[b.index]]
    return max(heights) if heights else 0.0


def noise_rms(x: F64, y: F64, *, lo: float = 2000.0, hi: float = 2200.0) -> float | None:
    """RMS noise in a usually band-free region (common practice), from second differences.

    For white noise of standard deviation σ, ``y[i-1] − 2·y[i] + y[i+1]`` has variance 6σ²,
    while a smooth baseline contributes almost nothing: no fit is needed.
    """
    i0, i1 = int(np.searchsorted(x, lo)), int(np.searchsorted(x, hi, side="right"))
    if i1 - i0 < 10:
        return None
    seg = y[i0:i1]
    d2 = seg[:-2] - 2.0 * seg[1:-1] + seg[2:]
    return float(np.sqrt(np.mean(d2 * d2) / 6.0))


def centred_unit(v: F64) -> F64:
    """Mean-centred, unit-length copy (its dot product with another is their Pearson r)."""
    c = v - v.mean()
    n = float(np.linalg.norm(c))
    return c / n if n > 0 else c


def unit(v: F64) -> F64:
    """Vector-normalised copy (unit Euclidean length)."""
    n = float(np.linalg.norm(v))
    return v / n if n > 0 else v
