"""Preprocessing steps as pure functions: crop, resample, normalise, ATR correction, region masks.

Arrays in, new arrays out; inputs are never written to. :class:`Step` records one step's name
and parameters so that a result can carry how it was made (see ``service.spectra.pipeline``).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.errors import InvalidInput

Region = tuple[float, float]


@dataclass(frozen=True)
class Step:
    """One preprocessing step as recorded: a name and its parameters (JSON-safe)."""

    name: str
    params: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "params": dict(self.params)}


def _axis(x: Any) -> NDArray[np.float64]:
    xa = np.asarray(x, dtype=np.float64)
    if xa.ndim != 1 or xa.size < 2 or np.any(np.diff(xa) <= 0):
        raise InvalidInput("the wavenumber axis must be 1-D and strictly ascending")
    return xa


def _pair(x: Any, y: Any) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    xa = _axis(x)
    ya = np.asarray(y, dtype=np.float64)
    if ya.shape != xa.shape:
        raise InvalidInput(f"{ya.size} values for an axis of {xa.size} points")
    return xa, ya


def _region(region: Sequence[float], what: str = "region") -> Region:
    try:
        lo, hi = (float(v) for v in region)
    except (TypeError, ValueError):
        raise InvalidInput(f"a {what} is two wavenumbers (low, high); got {region!r}") from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo >= hi:
        raise InvalidInput(f"a {what} needs low < high (cm⁻¹); got {lo:g}–{hi:g}")
    return lo, hi


def crop(x: Any, y: Any, *, lo: float, hi: float) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """The points with ``lo <= x <= hi`` (new arrays). Raises if fewer than 3 points remain."""
    xa, ya = _pair(x, y)
    lo, hi = _region((lo, hi), "crop range")
    sel = (xa >= lo) & (xa <= hi)
    if int(sel.sum()) < 3:
        raise InvalidInput(
            f"cropping to {lo:g}–{hi:g} cm⁻¹ leaves {int(sel.sum())} points; the spectrum covers "
            f"{xa[0]:g}–{xa[-1]:g} cm⁻¹"
        )
    return xa[sel].copy(), ya[sel].copy()


def uniform_grid(lo: float, hi: float, spacing: float) -> NDArray[np.float64]:
    """An ascending grid from ``lo`` to ``hi`` (inclusive when it falls on the spacing)."""
    lo, hi = _region((lo, hi), "grid range")
    if not spacing > 0:
        raise InvalidInput(f"grid spacing must be positive, got {spacing!r}")
    n = int(math.floor((hi - lo) / spacing + 1e-9)) + 1
    return lo + spacing * np.arange(n, dtype=np.float64)


def resample(x: Any, y: Any, grid: Any) -> NDArray[np.float64]:
    """Values on ``grid`` by linear interpolation (new array).

    The grid must lie within the measured range: values are never extrapolated, so a grid that
    runs past either end is an error that names the ranges.
    """
    xa, ya = _pair(x, y)
    ga = _axis(grid)
    tol = 1e-9 * max(1.0, abs(float(xa[-1])))
    if ga[0] < xa[0] - tol or ga[-1] > xa[-1] + tol:
        raise InvalidInput(
            f"cannot resample onto {ga[0]:g}–{ga[-1]:g} cm⁻¹: the spectrum covers only {xa[0]:g}–{xa[-1]:g} cm⁻¹"
        )
    return np.interp(ga, xa, ya)


def normalise_vector(y: Any) -> NDArray[np.float64]:
    """Divide by the Euclidean norm (unit length). An all-zero series is an error."""
    ya = np.asarray(y, dtype=np.float64)
    norm = float(np.sqrt(np.dot(ya, ya)))
    if norm == 0.0 or not math.isfinite(norm):
        raise InvalidInput("cannot vector-normalise: the values are all zero (or not finite)")
    return ya / norm


def normalise_snv(y: Any) -> NDArray[np.float64]:
    """Standard normal variate: subtract the mean, divide by the standard deviation (ddof=1).

    Barnes, Dhanoa & Lister (1989), Appl. Spectrosc. 43, 772-777.
    """
    ya = np.asarray(y, dtype=np.float64)
    if ya.size < 2:
        raise InvalidInput("SNV needs at least two values")
    centred = ya - ya.mean()
    sd = float(np.sqrt(np.dot(centred, centred) / (ya.size - 1)))
    if sd == 0.0:
        raise InvalidInput("cannot apply SNV: the values are constant")
    return centred / sd


def normalise_minmax(y: Any) -> NDArray[np.float64]:
    """Scale to 0 (minimum) .. 1 (maximum)."""
    ya = np.asarray(y, dtype=np.float64)
    lo, hi = float(ya.min()), float(ya.max())
    if hi == lo:
        raise InvalidInput("cannot min-max normalise: the values are constant")
    return (ya - lo) / (hi - lo)


def penetration_depth_um(wavenumber_cm1: Any, *, n_crystal: float, n_sample: float = 1.5,
                         angle_deg: float = 45.0) -> NDArray[np.float64] | float:
    """ATR penetration depth in µm (Harrick): dp = λ / (2π n₁ √(sin²θ − (n₂/n₁)²)).

    N. J. Harrick, *Internal Reflection Spectroscopy* (1967). λ in µm is 10⁴ / ν̃ (cm⁻¹).
    """
    s = math.sin(math.radians(angle_deg)) ** 2 - (n_sample / n_crystal) ** 2
    if s <= 0:
        raise InvalidInput(
            f"no total internal reflection: sin²θ must exceed (n_sample/n_crystal)² "
            f"(θ={angle_deg:g}°, n_crystal={n_crystal:g}, n_sample={n_sample:g})"
        )
    nu = np.asarray(wavenumber_cm1, dtype=np.float64)
    dp = (1e4 / nu) / (2.0 * math.pi * n_crystal * math.sqrt(s))
    return float(dp) if dp.ndim == 0 else dp


def atr_correct(x: Any, y: Any, *, reference_cm1: float = 1000.0) -> NDArray[np.float64]:
    """Simple ATR correction: scale absorbance by ν̃ / ν̃_ref.

    The penetration depth grows with wavelength (dp ∝ 1/ν̃, Harrick), so ATR bands at low
    wavenumber look too strong against a transmission spectrum; multiplying by ν̃/ν̃_ref undoes
    that proportionality (values at ``reference_cm1`` are unchanged). It does not correct the
    band-shape distortion near strong bands (that needs the refractive index dispersion).
    """
    xa, ya = _pair(x, y)
    if not reference_cm1 > 0:
        raise InvalidInput(f"ATR reference wavenumber must be positive, got {reference_cm1!r}")
    return ya * (xa / float(reference_cm1))


def mask_regions(x: Any, *, exclude: Iterable[Sequence[float]] = (),
                 include: Iterable[Sequence[float]] | None = None) -> NDArray[np.bool_]:
    """True where a point is used: inside any ``include`` region (all points if None) and
    outside every ``exclude`` region (bounds inclusive)."""
    xa = np.asarray(x, dtype=np.float64)
    if include is None:
        use = np.ones(xa.shape, dtype=bool)
    else:
        use = np.zeros(xa.shape, dtype=bool)
        for region in include:
            lo, hi = _region(region)
            use |= (xa >= lo) & (xa <= hi)
    for region in exclude:
        lo, hi = _region(region, "excluded region")
        use &= ~((xa >= lo) & (xa <= hi))
    return use
