"""Thin adapters from the evaluator's fixed grid to the spectral core (``service.spectra``).

The evaluator runs on one evenly spaced grid per method, so the objects that depend only on the
grid (Savitzky–Golay coefficients) are built once and cached; the rest are the core's own
functions. Only the noise estimate and the vector normalisations are local: they are a few
lines each on the hot path.
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache

import numpy as np
from numpy.typing import NDArray

from service.spectra import (
    Band,
    BandClasses,
    SavitzkyGolay,
    asls_second_difference,
    baseline_rubberband,
    find_bands,
)

F64 = NDArray[np.float64]

__all__ = ["Band", "all_bands", "baseline", "centred_unit", "mean", "noise_rms", "noise_rms_between", "norm",
           "savgol_derivative", "unit"]


def baseline(x: F64, y: F64, *, method: str, lam: float, p: float, stride: int = 1) -> F64:
    """The baseline under ``y``: asymmetric least squares (Eilers & Boelens 2005), rubber band, or none (zeros).

    With ``stride`` > 1 the least-squares baseline is fitted to every ``stride``-th point with the
    penalty scaled by ``stride⁻⁴`` (the second-difference penalty per point grows with the fourth
    power of the spacing) and interpolated back: a baseline this stiff varies over far more
    points than the stride, and the fit costs ``stride`` times less.
    """
    if method == "asls":
        base, _ = asls_second_difference(y[::stride], lam=lam / stride**4, p=p)
        return base if stride == 1 else np.interp(x, x[::stride], base)
    if method == "rubberband":
        return baseline_rubberband(x, y).baseline
    return np.zeros_like(y)


@lru_cache(maxsize=32)
def _savgol(window: int, polyorder: int) -> SavitzkyGolay:
    return SavitzkyGolay(window=window, polyorder=polyorder, deriv=1)


def savgol_derivative(y: F64, *, window: int, polyorder: int, step: float) -> F64:
    """First derivative by Savitzky–Golay (1964) with precomputed coefficients."""
    return _savgol(window, polyorder).apply(y, step)


def all_bands(x: F64, y: F64, keep: NDArray[np.bool_], *, detection_floor: float
              ) -> tuple[tuple[Band, ...], float]:
    """Every band of ``y`` whose maximum lies where ``keep`` is true, and the strongest one's height.

    One prominence search over the whole grid (so each band's local baseline is the standard
    prominence base); bands lower than ``detection_floor`` × the highest value are not counted.
    Relative intensities and the strong/medium/weak words are against the strongest kept band.
    """
    peak = float(y[keep].max()) if keep.any() else float(y.max())
    if not peak > 0:
        return (), 0.0
    every = find_bands(x, y, min_prominence=detection_floor * peak)
    found = [b for b in every if keep[b.index]]
    if not found:
        return (), 0.0
    ref = max(b.height for b in found)
    if ref == max(b.height for b in every):  # the core already measured against this band
        return tuple(found), ref
    classes = BandClasses()
    out = []
    for b in found:
        rel = b.height / ref
        strength = "strong" if rel >= classes.strong else "medium" if rel >= classes.medium else "weak"
        out.append(replace(b, relative_intensity=rel, strength=strength))
    return tuple(out), ref


def noise_rms(x: F64, y: F64, *, lo: float = 2000.0, hi: float = 2200.0) -> float | None:
    """RMS noise in a usually band-free region (common practice), from second differences.

    For white noise of standard deviation σ, ``y[i-1] − 2·y[i] + y[i+1]`` has variance 6σ²,
    while a smooth baseline contributes almost nothing: no fit is needed.
    """
    i0, i1 = int(np.searchsorted(x, lo)), int(np.searchsorted(x, hi, side="right"))
    if i1 - i0 < 10:
        return None
    return noise_rms_between(y, i0, i1)


def noise_rms_between(y: F64, i0: int, i1: int) -> float:
    """:func:`noise_rms` of the points ``y[i0:i1]`` (at least 3)."""
    seg = y[i0:i1]
    d2 = seg[:-2] - 2.0 * seg[1:-1] + seg[2:]
    return math.sqrt(mean(d2 * d2) / 6.0)


def mean(v: F64) -> float:
    """``float(np.mean(v))`` of a 1-D float64 array: the same pairwise sum divided by the count,
    without the wrapper's argument handling (a few µs a call on the hot path)."""
    return float(np.add.reduce(v) / v.size)


def norm(v: F64) -> float:
    """``float(np.linalg.norm(v))`` of a 1-D float64 array: the square root of ``v·v`` over ``v.ravel(order="K")``,
    as that function takes it (a strided view is copied first there too: BLAS sums it in another order)."""
    flat = v.ravel(order="K")
    return math.sqrt(flat.dot(flat))


def centred_unit(v: F64) -> F64:
    """Mean-centred, unit-length copy (its dot product with another is their Pearson r)."""
    c = v - mean(v)
    n = norm(c)
    return c / n if n > 0 else c


def unit(v: F64) -> F64:
    """Vector-normalised copy (unit Euclidean length)."""
    n = norm(v)
    return v / n if n > 0 else v
