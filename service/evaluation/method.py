"""The comparison method: one preprocessing, applied identically to sample, reference and library.

Ph. Eur. 2.2.24 and ASTM E1252 ask that spectra compared are obtained and treated the same way.
A :class:`Method` holds every parameter (grid, baseline, ATR correction, derivative, compared
regions, masks) so that a stored evaluation can be re-computed; :func:`prepare` applies it.

Steps, in order: absorbance (A = −log10 T where needed) → linear resampling onto the grid over the
evaluated range → baseline (asymmetric least squares, Eilers & Boelens 2005; or rubber band; or
none) → ATR penetration-depth correction (A · ν̃/ν̃_ref, ATR preparations only) → the metric's
vector over the compared regions less the excluded ones (mean-centred unit vector for Pearson;
Savitzky–Golay first derivative, then mean-centred unit, for first-derivative; unit vector for
Euclidean distance).
"""

from __future__ import annotations

import weakref
from dataclasses import dataclass
from functools import cached_property, lru_cache
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.evaluation import _kernels as k
from service.evaluation._axis import axis_hash, axis_spacing
from service.evaluation.specification import Specification
from service.spectra import to_absorbance
from service.spectra.model import Spectrum, YKind

__all__ = ["Method", "Prepared", "RangeNotCovered", "SpectrumFacts", "finish", "metric_vector", "prepare", "score",
           "spectrum_data_digest", "spectrum_facts", "spectrum_spacing"]

F64 = NDArray[np.float64]


DETECTION_FLOOR = 0.01  # smallest prominence counted as a band, as a fraction of the highest absorbance


class RangeNotCovered(ValueError):
    """The spectrum does not cover the method's range (an *invalid* measurement, not a failure)."""


@dataclass(frozen=True, kw_only=True)
class Method:
    """Every preprocessing parameter, hashable so prepared references and library views can be cached."""

    lo: float
    hi: float
    step: float = 1.0
    baseline: str = "asls"
    asls_lam: float = 1e6
    asls_p: float = 0.01
    asls_stride: int = 2
    atr_correction: bool = False
    atr_reference_cm1: float = 1000.0
    metric: str = "pearson"
    derivative_window: int = 15
    derivative_polyorder: int = 2
    regions: tuple[tuple[float, float], ...] = ()
    excluded: tuple[tuple[float, float], ...] = ()

    @classmethod
    def for_specification(cls, spec: Specification, **overrides: Any) -> "Method":
        """The method a specification implies (remembered per specification when there are no overrides)."""
        if not overrides:
            return _method_for(spec)
        return cls._build(spec, **overrides)

    @classmethod
    def _build(cls, spec: Specification, **overrides: Any) -> "Method":
        from service.evaluation.preparations import PREPARATIONS

        lo, hi = spec.window
        params: dict[str, Any] = dict(
            lo=lo, hi=hi, baseline=spec.baseline, atr_correction=PREPARATIONS[spec.preparation].is_atr,
            metric=spec.fingerprint.metric if spec.fingerprint else "pearson",
            regions=spec.fingerprint_regions(),
            excluded=tuple((r.lo, r.hi) for r in spec.excluded_regions()),
        )
        params.update(overrides)
        return cls(**params)

    @cached_property
    def grid(self) -> F64:
        n = int(np.floor((self.hi - self.lo) / self.step + 1e-9)) + 1
        g = self.lo + self.step * np.arange(n, dtype=np.float64)
        g.setflags(write=False)
        return g

    @cached_property
    def excluded_mask(self) -> NDArray[np.bool_]:
        """True where the grid lies in an excluded region."""
        g = self.grid
        m = np.zeros(g.size, dtype=bool)
        for lo, hi in self.excluded:
            m |= (g >= lo) & (g <= hi)
        m.setflags(write=False)
        return m

    @cached_property
    def kept_mask(self) -> NDArray[np.bool_]:
        """True where the grid lies outside every excluded region (``~excluded_mask``)."""
        m = ~self.excluded_mask
        m.setflags(write=False)
        return m

    def kept_between(self, lo: float, hi: float) -> NDArray[np.intp]:
        """Grid indices with ``lo <= grid <= hi`` outside the excluded regions (remembered per window)."""
        return _kept_between(self, float(lo), float(hi))

    @cached_property
    def compared(self) -> NDArray[np.intp]:
        """Grid indices compared by the fingerprint metric: inside the regions, outside the exclusions."""
        g = self.grid
        inside = np.zeros(g.size, dtype=bool)
        for lo, hi in self.regions or ((self.lo, self.hi),):
            inside |= (g >= lo) & (g <= hi)
        idx = np.flatnonzero(inside & ~self.excluded_mask)
        idx.setflags(write=False)
        return idx

    @cached_property
    def coverage_tolerance(self) -> float:
        return max(2.0 * self.step, 2.0)

    def as_dict(self) -> dict[str, Any]:
        """The parameters as recorded on every evaluation."""
        out: dict[str, Any] = {
            "absorbance": "A = -log10(T) for transmittance input",
            "range_cm1": [self.hi, self.lo],
            "resampling": {"method": "linear interpolation", "step_cm1": self.step, "points": int(self.grid.size)},
            "atr_correction": ({"method": "penetration-depth scaling A·ν̃/ν̃_ref",
                                "reference_cm1": self.atr_reference_cm1}
                               if self.atr_correction else None),
            "baseline": {"method": self.baseline},
            "metric": self.metric,
            "compared_regions_cm1": [[hi, lo] for lo, hi in (self.regions or ((self.lo, self.hi),))],
            "excluded_regions_cm1": [[hi, lo] for lo, hi in self.excluded],
            "compared_points": int(self.compared.size),
            "band_position": "3-point parabola through the maximum",
            "band_width": "full width at half height above the local (prominence) baseline",
            "band_detection_floor": f"prominence >= {DETECTION_FLOOR:g} x the highest corrected absorbance",
            "relative_intensity": "band height / height of the strongest band in the evaluated range "
                                  "(outside exclusions)",
        }
        if self.baseline == "asls":
            out["baseline"].update({"name": "asymmetric least squares (Eilers & Boelens 2005, pybaselines)",
                                    "lam": self.asls_lam, "p": self.asls_p,
                                    "fitted_every_nth_point": self.asls_stride,
                                    "lam_on_fitted_points": self.asls_lam / self.asls_stride**4})
        elif self.baseline == "rubberband":
            out["baseline"]["name"] = "rubber band (lower convex hull)"
        if self.metric == "first-derivative":
            out["derivative"] = {"method": "Savitzky-Golay (1964)", "window_points": self.derivative_window,
                                 "polyorder": self.derivative_polyorder}
        out["vector"] = {"pearson": "mean-centred unit vector (Pearson r = dot product)",
                         "first-derivative": "mean-centred unit vector of the first derivative",
                         "euclidean": "vector-normalised (unit length); distance = Euclidean norm of the difference"
                         }.get(self.metric, self.metric)
        return out


@lru_cache(maxsize=128)
def _method_for(spec: Specification) -> Method:
    return Method._build(spec)


@lru_cache(maxsize=64)
def _kept_between(method: Method, lo: float, hi: float) -> NDArray[np.intp]:
    g = method.grid
    idx = np.flatnonzero((g >= lo) & (g <= hi) & method.kept_mask)
    idx.setflags(write=False)
    return idx


@dataclass(frozen=True, eq=False, kw_only=True)
class Prepared:
    """A spectrum after the method: on the grid, baseline-corrected, with its metric vector."""

    method: Method
    resampled: F64  # absorbance on the grid
    corrected: F64  # after baseline subtraction
    final: F64  # after the ATR correction (= corrected when there is none): bands and metric use this
    vector: F64  # the metric's vector over `method.compared`
    reference_height: float  # height of the strongest band (above its local baseline) outside exclusions
    bands: tuple[k.Band, ...]  # every band outside the exclusions, ascending wavenumber
    data_sha256: str


@dataclass(frozen=True, kw_only=True)
class SpectrumFacts:
    """What the evaluator remembers per spectrum object: data digest, median spacing, axis key."""

    digest: str  # SHA-256 (hex) of the kind, then x and y as little-endian float64
    spacing: float  # median point spacing, cm⁻¹
    axis_key: bytes  # SHA-256 of the kind and x alone: the key of everything that depends only on the axis


_facts: "weakref.WeakKeyDictionary[Spectrum, SpectrumFacts]" = weakref.WeakKeyDictionary()


def spectrum_facts(s: Spectrum) -> SpectrumFacts:
    """The :class:`SpectrumFacts` of ``s``: spectra are immutable, so they are remembered per object,
    and the spacing per axis (one instrument sends the same axis with every file)."""
    found = _facts.get(s)
    if found is None:
        h, axis_key = axis_hash(s.kind.value, s.x)
        h.update(np.ascontiguousarray(s.y, dtype="<f8"))
        found = _facts[s] = SpectrumFacts(digest=h.hexdigest(), spacing=axis_spacing(axis_key, s.x),
                                          axis_key=axis_key)
    return found


def spectrum_data_digest(s: Spectrum) -> str:
    """SHA-256 of the spectrum's values (kind, then x and y as little-endian float64).

    Spectra are immutable, so the digest is remembered per object.
    """
    return spectrum_facts(s).digest


def spectrum_spacing(s: Spectrum) -> float:
    """Median point spacing (cm⁻¹), remembered per object like the digest."""
    return spectrum_facts(s).spacing


def as_absorbance(s: Spectrum) -> Spectrum:
    """The spectrum in absorbance (A = −log10 T, by the core's conversion); absorbance is returned as is."""
    return s if s.kind is YKind.absorbance else to_absorbance(s)


def prepare(spectrum: Spectrum, method: Method, *, data_sha256: str | None = None) -> Prepared:
    """Apply ``method`` to one spectrum.

    Raises
    ------
    RangeNotCovered
        If the spectrum does not reach both ends of the method's range.
    """
    s = as_absorbance(spectrum)
    tol = method.coverage_tolerance
    if s.x[0] > method.lo + tol or s.x[-1] < method.hi - tol:
        raise RangeNotCovered(
            f"the spectrum covers {s.x[-1]:.0f}–{s.x[0]:.0f} cm⁻¹ but the method needs "
            f"{method.hi:g}–{method.lo:g} cm⁻¹")
    y = np.interp(method.grid, s.x, s.y)
    return finish(y, method, data_sha256 or spectrum_data_digest(spectrum))


def finish(y: F64, method: Method, digest: str = "") -> Prepared:
    """The method's steps after resampling, for absorbance ``y`` already on ``method.grid``."""
    grid = method.grid
    corrected = y - k.baseline(grid, y, method=method.baseline, lam=method.asls_lam, p=method.asls_p,
                               stride=method.asls_stride)
    final = corrected * (grid / method.atr_reference_cm1) if method.atr_correction else corrected
    bands, reference_height = k.all_bands(grid, final, method.kept_mask, detection_floor=DETECTION_FLOOR)
    vector = metric_vector(final, method)
    for a in (y, corrected, final, vector):
        a.setflags(write=False)
    return Prepared(method=method, resampled=y, corrected=corrected, final=final, vector=vector,
                    reference_height=reference_height, bands=bands, data_sha256=digest)


def metric_vector(corrected: F64, method: Method) -> F64:
    """The metric's vector from a baseline-corrected spectrum on the grid."""
    if method.metric == "first-derivative":
        d = k.savgol_derivative(corrected, window=method.derivative_window, polyorder=method.derivative_polyorder,
                                step=method.step)
        return k.centred_unit(d[method.compared])
    if method.metric == "euclidean":
        return k.unit(corrected[method.compared])
    return k.centred_unit(corrected[method.compared])


def score(a: F64, b: F64, metric: str) -> float:
    """Pearson r / first-derivative r (dot of centred unit vectors) or Euclidean distance of unit vectors."""
    if metric == "euclidean":
        return float(np.linalg.norm(a - b))
    return float(np.dot(a, b))
