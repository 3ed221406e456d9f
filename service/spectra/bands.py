"""Band measurement on absorbance-like data: where the bands are, how strong, how wide.

Bands are local maxima found by prominence (``scipy.signal.find_peaks``). Each band's position
is refined to sub-point precision by a 3-point parabola through the maximum and its neighbours
(δ = ½(y₋₁ − y₊₁)/(y₋₁ − 2y₀ + y₊₁) points); its height is measured above the local baseline, the
straight line between the two prominence bases (the lowest points on either side before a higher
band); its full width at half height is where the signal crosses baseline + height/2
(``scipy.signal.peak_widths``, linear interpolation between points).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray
from scipy.signal import find_peaks, peak_widths

from service.errors import InvalidInput


@dataclass(frozen=True)
class BandClasses:
    """Thresholds for the words used to describe a band (common practice; adjustable).

    ``strong`` if relative intensity >= ``strong``, ``medium`` if >= ``medium``, else ``weak``;
    ``broad`` if the full width at half height >= ``broad_fwhm_cm1``, else ``sharp``. A
    hydrogen-bonded O–H band is typically 200–400 cm⁻¹ wide, a C≡N stretch about 10 cm⁻¹.
    """

    strong: float = 0.67
    medium: float = 0.33
    broad_fwhm_cm1: float = 50.0


@dataclass(frozen=True)
class Band:
    """One measured band. Heights are in the units of the input (absorbance)."""

    position_cm1: float
    height: float
    relative_intensity: float
    fwhm_cm1: float
    strength: Literal["strong", "medium", "weak"]
    shape: Literal["broad", "sharp"]
    position_method: Literal["parabolic", "centroid"]
    prominence: float = 0.0
    index: int = 0  # index of the maximum in the arrays given to find_bands

    def as_dict(self) -> dict[str, Any]:
        return {
            "position_cm1": round(self.position_cm1, 3), "height": self.height,
            "relative_intensity": self.relative_intensity, "fwhm_cm1": round(self.fwhm_cm1, 3),
            "strength": self.strength, "shape": self.shape, "position_method": self.position_method,
            "prominence": self.prominence,
        }


def parabolic_offset(y_left: float, y_centre: float, y_right: float) -> float:
    """Offset in points of the vertex of the parabola through three equally spaced values."""
    denom = y_left - 2.0 * y_centre + y_right
    if denom == 0.0:
        return 0.0
    return float(np.clip(0.5 * (y_left - y_right) / denom, -0.5, 0.5))


_FEW_PEAKS = 16  # up to this many maxima a loop over Python floats beats some twenty small numpy calls


def _positions(x: NDArray[np.float64], y: NDArray[np.float64], peaks: NDArray[np.intp]) -> list[float]:
    """:func:`parabolic_offset` at every maximum (maxima at either end keep their point).

    Few maxima are refined one by one on Python floats, many in one numpy pass; both take the same
    IEEE 754 operations in the same order (the offset's quotient, its clip to ±½, one product and
    one sum), so they give the same bits.
    """
    if peaks.size <= _FEW_PEAKS:
        return _positions_one_by_one(x, y, peaks)
    pos = x[peaks]
    inner = (peaks > 0) & (peaks < x.size - 1)
    every = bool(inner.all())
    p = peaks if every else peaks[inner]
    yl, y0, yr = y[p - 1], y[p], y[p + 1]
    denom = yl - 2.0 * y0 + yr
    delta = np.divide(0.5 * (yl - yr), denom, out=np.zeros(p.size), where=denom != 0.0)
    np.minimum(np.maximum(delta, -0.5, out=delta), 0.5, out=delta)
    xp = x[p]
    step = np.where(delta >= 0, x[p + 1] - xp, xp - x[p - 1])
    refined = xp + delta * step
    if every:
        return refined.tolist()  # type: ignore[no-any-return]
    pos[inner] = refined
    return pos.tolist()  # type: ignore[no-any-return]


def _positions_one_by_one(x: NDArray[np.float64], y: NDArray[np.float64], peaks: NDArray[np.intp]) -> list[float]:
    last = x.size - 1
    out = []
    for i in peaks.tolist():
        xi = x.item(i)
        if 0 < i < last:
            yl, y0, yr = y.item(i - 1), y.item(i), y.item(i + 1)
            denom = yl - 2.0 * y0 + yr
            d = 0.5 * (yl - yr) / denom if denom != 0.0 else 0.0
            d = min(max(d, -0.5), 0.5)
            xi = xi + d * (x.item(i + 1) - xi if d >= 0 else xi - x.item(i - 1))
        out.append(xi)
    return out


def _centroids(x: NDArray[np.float64], y: NDArray[np.float64], peaks: NDArray[np.intp], half: NDArray[np.float64],
               left_ips: NDArray[np.float64], right_ips: NDArray[np.float64]) -> NDArray[np.float64]:
    out = x[peaks].astype(np.float64)
    for k in range(peaks.size):
        lo, hi = int(np.ceil(left_ips[k])), int(np.floor(right_ips[k])) + 1
        w = np.clip(y[lo:hi] - half[k], 0.0, None)
        total = float(w.sum())
        if total > 0:
            out[k] = float(np.dot(w, x[lo:hi]) / total)
    return out


def find_bands(
    x: Any,
    y: Any,
    *,
    window: Sequence[float] | None = None,
    min_prominence: float = 0.01,
    reference_height: float | None = None,
    classes: BandClasses = BandClasses(),
    position_method: Literal["parabolic", "centroid"] = "parabolic",
) -> list[Band]:
    """Find and measure the bands of ``y`` (absorbance, bands as maxima) within ``window``.

    Parameters
    ----------
    x, y : array_like
        Ascending wavenumbers (cm⁻¹) and absorbance values; not modified.
    window : (low, high), optional
        The range searched (cm⁻¹, inclusive); the whole spectrum if omitted.
    min_prominence : float
        Smallest prominence (absorbance units) for a maximum to count as a band.
    reference_height : float, optional
        Height that counts as relative intensity 1. By default the strongest band found in the
        window, i.e. relative intensity is against the strongest band in the evaluated range.
    classes : BandClasses
        Thresholds for strong/medium/weak and broad/sharp.
    position_method : {"parabolic", "centroid"}
        ``parabolic``: vertex of the parabola through the maximum and its two neighbours.
        ``centroid``: centre of gravity of the band above its half height (over the local
        baseline), which uses more points and suits broad or noisy bands.

    Returns
    -------
    list of Band, in ascending wavenumber.
    """
    xa = np.asarray(x, dtype=np.float64)
    ya = np.asarray(y, dtype=np.float64)
    if xa.ndim != 1 or xa.shape != ya.shape:
        raise InvalidInput(f"find_bands needs one value per wavenumber; got {ya.shape} values for {xa.shape} points")
    if position_method not in ("parabolic", "centroid"):
        raise InvalidInput(f"position_method must be 'parabolic' or 'centroid', not {position_method!r}")
    if min_prominence <= 0:
        raise InvalidInput(f"min_prominence must be positive, got {min_prominence!r}")
    if window is not None:
        lo, hi = (float(v) for v in window)
        if lo >= hi:
            raise InvalidInput(f"a band window needs low < high; got {lo:g}–{hi:g}")
        i0, i1 = int(np.searchsorted(xa, lo, "left")), int(np.searchsorted(xa, hi, "right"))
        xa, ya, offset = xa[i0:i1], ya[i0:i1], i0
    else:
        offset = 0
    if xa.size < 3:
        return []
    peaks, props = find_peaks(ya, prominence=min_prominence)
    if peaks.size == 0:
        return []
    left, right = props["left_bases"], props["right_bases"]
    # local baseline: the line between the two prominence bases, evaluated at the maximum
    span = xa[right] - xa[left]
    frac = np.where(span > 0, (xa[peaks] - xa[left]) / np.where(span > 0, span, 1.0), 0.5)
    base_at_peak = ya[left] + frac * (ya[right] - ya[left])
    heights = ya[peaks] - base_at_peak
    # widths at baseline + height/2: peak_widths measures at y[peak] - prominence * rel_height
    widths = peak_widths(ya, peaks, rel_height=0.5, prominence_data=(heights, left, right))
    idx = np.arange(xa.size, dtype=np.float64)
    x_left = np.interp(widths[2], idx, xa)
    x_right = np.interp(widths[3], idx, xa)
    fwhm = x_right - x_left
    if position_method == "parabolic":
        positions = _positions(xa, ya, peaks)
    else:
        positions = _centroids(xa, ya, peaks, base_at_peak + 0.5 * heights, widths[2], widths[3]).tolist()
    ref = float(heights.max()) if reference_height is None else float(reference_height)
    if not ref > 0:
        raise InvalidInput(f"reference height must be positive, got {ref!r}")
    strong, medium, broad = classes.strong, classes.medium, classes.broad_fwhm_cm1
    bands = []
    for pos, h, w, prom, i in zip(positions, heights.tolist(), fwhm.tolist(),
                                  props["prominences"].tolist(), peaks.tolist()):
        rel = h / ref
        bands.append(Band(
            position_cm1=pos, height=h, relative_intensity=rel, fwhm_cm1=w,
            strength="strong" if rel >= strong else "medium" if rel >= medium else "weak",
            shape="broad" if w >= broad else "sharp", position_method=position_method,
            prominence=prom, index=i + offset,
        ))
    return bands
