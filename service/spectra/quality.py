"""Spectrum quality: what a trained analyst checks by eye, as named findings with values and limits.

Every finding carries the measured value, the limit it was held against and an outcome:
``fail`` (the spectrum should not be used for an identity decision), ``warn`` (valid but
suspicious: record it and look) or ``pass``. The default limits are common practice (see
``docs/spectra-numerics.md``), not pharmacopoeial values; a specification may set its own.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray
from scipy.ndimage import percentile_filter

from service.errors import InvalidInput
from service.spectra.bands import find_bands
from service.spectra.baseline import baseline_rubberband
from service.spectra.model import Spectrum, YKind
from service.spectra.smoothing import SavitzkyGolay

Outcome = Literal["pass", "warn", "fail"]
Region = tuple[float, float]


@dataclass(frozen=True)
class QualityLimits:
    """Limits for :func:`assess_quality` (defaults: common practice)."""

    max_absorbance: float = 1.5  # strongest band not saturated (T >~ 3 %)
    max_flat_top_ratio: float = 0.3  # flat top width / FWHM of a strong band
    flat_top_min_absorbance: float = 0.5  # tops lower than this cannot be clipped by the detector
    min_band_height: float = 0.1  # strongest band not too weak (absorbance above baseline)
    min_snr: float = 100.0  # strongest band height / noise RMS
    noise_regions: tuple[Region, ...] = ((2000.0, 2200.0),)  # band-free for most organics
    max_negative_band: float = 0.05  # deepest dip below baseline / strongest band
    water_vapour_regions: tuple[Region, ...] = ((3650.0, 3950.0),)
    max_water_vapour: float = 0.01  # excess sharp-line RMS / strongest band
    co2_region: Region = (2280.0, 2400.0)
    max_co2: float = 0.05  # |CO₂ band| / strongest band
    max_baseline_rise: float = 0.25  # rubber-band baseline rise / strongest band
    needed_range_cm1: Region | None = None  # what a specification needs, if known
    max_spacing_cm1: float | None = None

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class QualityFinding:
    name: str
    outcome: Outcome
    measured: float | None
    limit: float | None
    message: str
    unit: str = ""

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "outcome": self.outcome, "measured": self.measured, "limit": self.limit,
                "unit": self.unit, "message": self.message}


@dataclass(frozen=True)
class QualityReport:
    findings: tuple[QualityFinding, ...]

    @property
    def outcome(self) -> Outcome:
        outcomes = {f.outcome for f in self.findings}
        return "fail" if "fail" in outcomes else "warn" if "warn" in outcomes else "pass"

    @property
    def usable(self) -> bool:
        return self.outcome != "fail"

    def finding(self, name: str) -> QualityFinding:
        for f in self.findings:
            if f.name == name:
                return f
        raise KeyError(name)

    def as_dict(self) -> dict[str, Any]:
        return {"outcome": self.outcome, "findings": [f.as_dict() for f in self.findings]}


def _r(v: float, digits: int = 6) -> float:
    return float(f"{v:.{digits}g}")


def _in(x: NDArray[np.float64], region: Region) -> NDArray[np.bool_]:
    return (x >= region[0]) & (x <= region[1])


def _noise_rms(x: NDArray[np.float64], a: NDArray[np.float64], regions: tuple[Region, ...]) -> float | None:
    """Median RMS of residuals after a quadratic fit, over ~50 cm⁻¹ segments of the regions."""
    rms = []
    for region in regions:
        sel = np.flatnonzero(_in(x, region))
        if sel.size < 10:
            continue
        n_seg = max(1, int(round((x[sel[-1]] - x[sel[0]]) / 50.0)))
        for seg in np.array_split(sel, n_seg):
            if seg.size < 6:
                continue
            t = x[seg] - x[seg].mean()
            resid = a[seg] - np.polyval(np.polyfit(t, a[seg], 2), t)
            rms.append(math.sqrt(float(np.dot(resid, resid)) / (seg.size - 3)))
    return float(np.median(rms)) if rms else None


def _run_width(x: NDArray[np.float64], above: NDArray[np.bool_], i: int) -> float:
    lo = i
    while lo > 0 and above[lo - 1]:
        lo -= 1
    hi = i
    while hi < above.size - 1 and above[hi + 1]:
        hi += 1
    return float(x[hi] - x[lo])


def coverage_findings(spectrum: Spectrum, *, needed_range: Region | None = None,
                      max_spacing_cm1: float | None = None) -> tuple[QualityFinding, ...]:
    """Does the spectrum cover the range and resolve the spacing a specification needs?"""
    out = []
    lo, hi = spectrum.range_cm1
    if needed_range is not None:
        nlo, nhi = float(needed_range[0]), float(needed_range[1])
        missing = max(0.0, lo - nlo) + max(0.0, nhi - hi)
        ok = missing == 0.0
        out.append(QualityFinding(
            "range", "pass" if ok else "fail", _r(missing), 0.0,
            f"spectrum covers {lo:g}–{hi:g} cm⁻¹; needed {nlo:g}–{nhi:g} cm⁻¹"
            + ("" if ok else f" ({missing:g} cm⁻¹ missing): measure the full range"), "cm⁻¹ missing"))
    if max_spacing_cm1 is not None:
        sp = spectrum.spacing_cm1
        ok = sp <= max_spacing_cm1 * (1 + 1e-9)
        out.append(QualityFinding(
            "point spacing", "pass" if ok else "fail", _r(sp), float(max_spacing_cm1),
            f"median point spacing {sp:.4g} cm⁻¹; at most {max_spacing_cm1:g} cm⁻¹ needed"
            + ("" if ok else ": measure with finer resolution / data spacing"), "cm⁻¹"))
    return tuple(out)


def assess_quality(spectrum_absorbance: Spectrum, *, limits: QualityLimits = QualityLimits()) -> QualityReport:
    """Named quality findings for an absorbance spectrum (see the module docstring).

    The strongest band's height is taken above a rubber-band baseline; noise is the median RMS
    of quadratic-fit residuals over 50 cm⁻¹ segments of the band-free regions; negative bands
    are dips below a running 10th percentile (~1000 cm⁻¹, wide enough to reach a band-free stretch
    beside a crowded fingerprint region) beyond 3 × noise; water-vapour lines are the sharp-line
    residual (values minus a ~25 cm⁻¹ Savitzky-Golay smooth) in excess of the noise.
    """
    s = spectrum_absorbance
    if s.kind is not YKind.absorbance:
        raise InvalidInput(
            f"quality checks need an absorbance spectrum, not {s.kind.value}; convert it first (to_absorbance)"
        )
    x, a = s.x, s.y
    dx = s.spacing_cm1
    rb = baseline_rubberband(x, a)
    corrected = rb.corrected
    top = int(np.argmax(corrected))
    height = float(corrected[top])
    findings: list[QualityFinding] = []

    amax = float(a.max())
    ok = amax <= limits.max_absorbance
    findings.append(QualityFinding(
        "saturation", "pass" if ok else "fail", _r(amax), limits.max_absorbance,
        f"highest absorbance {amax:.3f} at {x[int(np.argmax(a))]:.1f} cm⁻¹"
        + ("" if ok else " (detector response no longer linear): use a thinner film or less sample, "
           "and measure again"), "absorbance"))

    w = max(5, int(round(15.0 / dx)) | 1)
    smooth = SavitzkyGolay(window=w, polyorder=2).apply(corrected) if a.size > w else corrected
    noise = _noise_rms(x, a, limits.noise_regions)
    ratio, where_flat = 0.0, float(x[top])
    if height > 0:
        # on the unsmoothed values (smoothing rounds a clipped top): points within 2 % of the band height
        # (or 4 × noise, if larger) of its maximum, against the full width at half height
        tol_top = max(0.02 * height, 4.0 * (noise or 0.0))
        for band in find_bands(x, corrected, min_prominence=0.25 * height):
            if band.height < 0.5 * height or band.fwhm_cm1 <= 0 or a[band.index] < limits.flat_top_min_absorbance:
                continue
            # minus one spacing: two points straddling a sharp maximum are not a flat top
            flat = max(0.0, _run_width(x, corrected >= corrected[band.index] - tol_top, band.index) - dx)
            if flat / band.fwhm_cm1 > ratio:
                ratio, where_flat = flat / band.fwhm_cm1, band.position_cm1
    ok = ratio <= limits.max_flat_top_ratio
    findings.append(QualityFinding(
        "flat-topped band", "pass" if ok else "fail", _r(ratio, 4), limits.max_flat_top_ratio,
        f"flattest strong band top (within 2 % of its height) at {where_flat:.1f} cm⁻¹ spans {ratio:.2f} of its "
        "half-height width" + ("" if ok else ": the band is clipped (saturated); measure a thinner sample"), "ratio"))

    ok = height >= limits.min_band_height
    findings.append(QualityFinding(
        "too weak", "pass" if ok else "fail", _r(height), limits.min_band_height,
        f"strongest band {height:.3f} absorbance above baseline at {x[top]:.1f} cm⁻¹"
        + ("" if ok else ": too weak to judge; use more sample or better ATR contact"), "absorbance"))

    regions = ", ".join(f"{lo:g}–{hi:g}" for lo, hi in limits.noise_regions)
    if noise is None:
        findings.append(QualityFinding(
            "noise", "warn", None, None, f"noise not measured: the spectrum does not cover {regions} cm⁻¹",
            "absorbance RMS"))
    else:
        limit = height / limits.min_snr
        ok = noise <= limit
        snr = height / noise if noise > 0 else math.inf
        findings.append(QualityFinding(
            "noise", "pass" if ok else "fail", _r(noise), _r(limit),
            f"noise RMS {noise:.2e} absorbance in {regions} cm⁻¹ after detrending; signal-to-noise "
            f"{snr:.0f} (needs ≥ {limits.min_snr:g})" + ("" if ok else ": co-add more scans or use more sample"),
            "absorbance RMS"))
    noise_v = noise or 0.0

    # general baseline level: a running 10th percentile over ~1000 cm⁻¹ of the smoothed values, which a
    # narrow dip cannot pull down; a dip below it deeper than the noise is a negative band
    size = max(3, int(round(1000.0 / dx)) | 1)
    level = percentile_filter(smooth + rb.baseline, 10, size=size, mode="nearest")
    depth = level - (smooth + rb.baseline) - 3.0 * (noise or 0.0)
    k = int(np.argmax(depth))
    dip = max(0.0, float(depth[k]))
    rel = dip / height if height > 0 else 0.0
    ok = rel <= limits.max_negative_band
    findings.append(QualityFinding(
        "negative bands", "pass" if ok else "warn", _r(rel, 4), limits.max_negative_band,
        f"deepest dip below the baseline level {dip:.4f} absorbance at {x[k]:.1f} cm⁻¹ "
        f"({100 * rel:.1f} % of the strongest band)"
        + ("" if ok else ": clean the ATR crystal / cell and record a new background"), "fraction of strongest band"))

    ws = max(5, int(round(25.0 / dx)) | 1)
    covered = [r for r in limits.water_vapour_regions if int(_in(x, r).sum()) >= ws]
    if not covered or a.size <= ws or dx > 8.0:
        findings.append(QualityFinding(
            "water vapour", "warn", None, limits.max_water_vapour,
            "water-vapour lines not measured: region not covered or points too far apart", "fraction of strongest band"))
    else:
        resid = a - SavitzkyGolay(window=ws, polyorder=2).apply(a)
        sel = np.zeros(x.shape, dtype=bool)
        for r in covered:
            sel |= _in(x, r)
        rms_w = math.sqrt(float(np.mean(resid[sel] ** 2)))
        excess = math.sqrt(max(0.0, rms_w**2 - noise_v**2))
        rel = excess / height if height > 0 else 0.0
        ok = rel <= limits.max_water_vapour
        findings.append(QualityFinding(
            "water vapour", "pass" if ok else "warn", _r(rel, 4), limits.max_water_vapour,
            f"sharp-line residual {rms_w:.2e} RMS in {', '.join(f'{lo:g}–{hi:g}' for lo, hi in covered)} cm⁻¹ "
            f"({100 * rel:.2f} % of the strongest band beyond noise)"
            + ("" if ok else ": purge the instrument longer or record a fresh background"),
            "fraction of strongest band"))

    clo, chi = limits.co2_region
    inside = _in(x, (clo, chi))
    left = _in(x, (clo - 15.0, clo))
    right = _in(x, (chi, chi + 15.0))
    if int(inside.sum()) < 5 or not left.any() or not right.any():
        findings.append(QualityFinding(
            "CO₂", "warn", None, limits.max_co2, f"CO₂ not measured: {clo:g}–{chi:g} cm⁻¹ not covered",
            "fraction of strongest band"))
    else:
        xl, yl = float(x[left].mean()), float(a[left].mean())
        xr, yr = float(x[right].mean()), float(a[right].mean())
        line = yl + (yr - yl) * (x[inside] - xl) / (xr - xl)
        band = float(np.abs(a[inside] - line).max())
        rel = band / height if height > 0 else 0.0
        ok = rel <= limits.max_co2
        findings.append(QualityFinding(
            "CO₂", "pass" if ok else "warn", _r(rel, 4), limits.max_co2,
            f"CO₂ band {band:.4f} absorbance in {clo:g}–{chi:g} cm⁻¹ ({100 * rel:.1f} % of the strongest band)"
            + ("" if ok else ": purge longer or record the background closer in time"), "fraction of strongest band"))

    rise = float(rb.baseline.max() - rb.baseline.min())
    rel = rise / height if height > 0 else 0.0
    ok = rel <= limits.max_baseline_rise
    findings.append(QualityFinding(
        "sloping baseline", "pass" if ok else "warn", _r(rel, 4), limits.max_baseline_rise,
        f"baseline rises by {rise:.3f} absorbance across the range ({100 * rel:.0f} % of the strongest band)"
        + ("" if ok else ": scattering (grind the disc finer) or poor contact; baseline correction will be needed"),
        "fraction of strongest band"))

    findings.extend(coverage_findings(s, needed_range=limits.needed_range_cm1, max_spacing_cm1=limits.max_spacing_cm1))
    return QualityReport(tuple(findings))
