"""Small numerical kernels the evaluator runs on its fixed grid.

These work on arrays already on the evaluation grid and are written for the hot path (one
evaluation in a few milliseconds): precomputed Savitzky–Golay coefficients, one pybaselines
solver object per grid, scipy peak finding. General-purpose versions of the same methods live in
``service.spectra``.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import NDArray
from scipy.ndimage import convolve1d
from scipy.signal import find_peaks, peak_widths, savgol_coeffs

F64 = NDArray[np.float64]


@lru_cache(maxsize=32)
def _asls_solver(n: int, step: float):  # type: ignore[no-untyped-def]
    from pybaselines import Baseline

    return Baseline(x_data=np.arange(n, dtype=np.float64) * step)


def baseline_asls(y: F64, *, step: float, lam: float, p: float) -> F64:
    """Asymmetric least squares baseline (Eilers & Boelens 2005) via pybaselines, solver cached per grid."""
    base, _ = _asls_solver(y.size, step).asls(y, lam=lam, p=p)
    return np.asarray(base, dtype=np.float64)


def baseline_rubberband(x: F64, y: F64) -> F64:
    """Lower convex hull of the points (rubber band), interpolated on the axis."""
    from scipy.spatial import ConvexHull

    pts = np.column_stack([x, y])
    try:
        hull = ConvexHull(pts)
    except Exception:  # degenerate (flat) input: the line through the ends
        return np.interp(x, x[[0, -1]], y[[0, -1]])
    v = hull.vertices  # counter-clockwise in 2-D: from the leftmost point the walk runs along the bottom
    v = np.roll(v, -int(np.argmin(v)))
    idx = v[: int(np.argmax(v)) + 1]
    return np.interp(x, x[idx], y[idx])


@lru_cache(maxsize=32)
def savgol_derivative_kernel(window: int, polyorder: int) -> F64:
    """Savitzky–Golay (1964) first-derivative coefficients, ordered for ``convolve1d``."""
    k = savgol_coeffs(window, polyorder, deriv=1, use="conv")
    k.setflags(write=False)
    return k


def savgol_derivative(y: F64, *, window: int, polyorder: int, step: float) -> F64:
    """First derivative by Savitzky–Golay with precomputed coefficients (edges: nearest value)."""
    return convolve1d(y, savgol_derivative_kernel(window, polyorder), mode="nearest") / step


@dataclass(frozen=True, kw_only=True)
class FoundBand:
    position_cm1: float
    height: float  # baseline-corrected absorbance at the maximum
    prominence: float
    relative_intensity: float
    fwhm_cm1: float
    position_method: str = "parabolic"


def bands_in_window(x: F64, y: F64, *, lo: float, hi: float, reference_height: float,
                    min_relative_prominence: float = 0.01) -> list[FoundBand]:
    """Bands (local maxima) whose maximum lies inside ``lo``–``hi``, strongest first.

    Position by a 3-point parabola through the maximum; width at half prominence (scipy
    ``peak_widths``); relative intensity = baseline-corrected height / ``reference_height``.
    """
    step = float(x[1] - x[0])
    pad = int(round(max(60.0, (hi - lo)) / step))
    i0 = max(int(np.searchsorted(x, lo)) - pad, 0)
    i1 = min(int(np.searchsorted(x, hi, side="right")) + pad, x.size)
    seg = y[i0:i1]
    if seg.size < 3 or reference_height <= 0:
        return []
    peaks, props = find_peaks(seg, prominence=min_relative_prominence * reference_height)
    if peaks.size == 0:
        return []
    widths = peak_widths(seg, peaks, rel_height=0.5, prominence_data=(
        props["prominences"], props["left_bases"], props["right_bases"]))[0]
    out = []
    for k, p in enumerate(peaks):
        pos = float(x[i0 + p])
        if 0 < p < seg.size - 1:
            a, b, c = seg[p - 1], seg[p], seg[p + 1]
            den = a - 2 * b + c
            if den < 0:
                pos += 0.5 * (a - c) / den * step
        if not (lo <= pos <= hi):
            continue
        height = float(seg[p])
        out.append(FoundBand(position_cm1=pos, height=height, prominence=float(props["prominences"][k]),
                             relative_intensity=height / reference_height, fwhm_cm1=float(widths[k] * step)))
    out.sort(key=lambda b: -b.height)
    return out


def noise_rms(x: F64, y: F64, *, lo: float = 2000.0, hi: float = 2200.0) -> float | None:
    """RMS of the residual after a quadratic fit in a usually band-free region (common practice)."""
    sel = (x >= lo) & (x <= hi)
    if sel.sum() < 10:
        return None
    xs, ys = x[sel], y[sel]
    coef = np.polyfit(xs - xs.mean(), ys, 2)
    resid = ys - np.polyval(coef, xs - xs.mean())
    return float(np.sqrt(np.mean(resid * resid)))


def centred_unit(v: F64) -> F64:
    """Mean-centred, unit-length copy (its dot product with another is their Pearson r)."""
    c = v - v.mean()
    n = float(np.linalg.norm(c))
    return c / n if n > 0 else c


def unit(v: F64) -> F64:
    """Vector-normalised copy (unit Euclidean length)."""
    n = float(np.linalg.norm(v))
    return v / n if n > 0 else v
