"""Can this measurement be judged at all? Quality criteria on the sample spectrum.

What a trained analyst checks by eye (common practice): the strongest band not saturated
(absorbance ≲ 1.5) and not too weak (≳ 0.1), noise in a band-free region small against the bands,
no negative bands. A failed quality criterion makes the evaluation *invalid* (measure again), not
failed; suspicious but usable findings become warnings.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from service.evaluation import _kernels as k
from service.evaluation.method import Prepared
from service.evaluation.result import Criterion, Notice
from service.evaluation.specification import Specification
from service.spectra import QualityLimits, SavitzkyGolay
from service.spectra.model import Spectrum

__all__ = ["MIN_SIGNAL_TO_NOISE", "NOISE_REGION_CM1", "judge_quality"]

MIN_SIGNAL_TO_NOISE = 30.0  # strongest band height / RMS noise (common practice: bands far above the noise)
NOISE_REGION_CM1 = (2000.0, 2200.0)  # band-free for most organics (common practice)
NEGATIVE_BAND_FRACTION = 0.10
WATER_VAPOUR_REGION_CM1 = (3650.0, 3950.0)  # rotation-vibration lines, above the sample O–H bands
MAX_WATER_VAPOUR = QualityLimits().max_water_vapour  # sharp-line residual / strongest band (the core's default)


def _highest(x: np.ndarray, y: np.ndarray, lo: float, hi: float, excluded: tuple[tuple[float, float], ...]
             ) -> tuple[float, float]:
    """Highest value (and where) of the original points in ``lo``–``hi`` outside the excluded intervals."""
    edges = sorted((a, b) for a, b in excluded if b > lo and a < hi)
    best, where, start = -np.inf, float("nan"), lo
    for a, b in edges + [(hi, hi)]:
        i0, i1 = int(np.searchsorted(x, start)), int(np.searchsorted(x, a, side="right"))
        if i1 > i0:
            k = i0 + int(np.argmax(y[i0:i1]))
            if y[k] > best:
                best, where = float(y[k]), float(x[k])
        start = max(start, b)
    return (best if np.isfinite(best) else float("nan")), where


@lru_cache(maxsize=16)
def _smoother(window: int) -> SavitzkyGolay:
    return SavitzkyGolay(window=window, polyorder=2)


def _water_vapour(x: np.ndarray, y: np.ndarray, noise: float, signal: float, lo: float, hi: float) -> float | None:
    """Sharp-line residual (values minus a ~25 cm⁻¹ Savitzky–Golay smooth) beyond the noise, per strongest band.

    The same measure as the spectral core's quality report, on the vapour region only.
    """
    a, b = max(WATER_VAPOUR_REGION_CM1[0], lo), min(WATER_VAPOUR_REGION_CM1[1], hi)
    i0, i1 = int(np.searchsorted(x, a)), int(np.searchsorted(x, b, side="right"))
    if i1 - i0 < 30 or signal <= 0:
        return None
    step = float(x[i1 - 1] - x[i0]) / (i1 - i0 - 1)
    window = max(5, int(round(25.0 / step)) | 1)
    if window >= i1 - i0 or step > 8.0:
        return None
    seg = y[i0:i1]
    resid = seg - _smoother(window).apply(seg)
    rms = float(np.sqrt(np.mean(resid * resid)))
    return float(np.sqrt(max(0.0, rms * rms - noise * noise))) / signal


def judge_quality(absorbance: Spectrum, prepared: Prepared, spec: Specification
                  ) -> tuple[list[Criterion], list[Notice], list[Notice]]:
    """Quality criteria, warnings and reasons for *invalid* for the sample (already in absorbance)."""
    method = prepared.method
    criteria: list[Criterion] = []
    warnings: list[Notice] = []
    invalid: list[Notice] = []
    x, y = absorbance.x, absorbance.y
    top, top_at = _highest(x, y, method.lo, method.hi, method.excluded)
    q = spec.quality
    ok = top <= q.max_absorbance
    criteria.append(Criterion(
        kind="quality", label="strongest absorbance (saturation)", outcome="pass" if ok else "fail",
        measured=top, limit=q.max_absorbance, comparison="<=", unit="absorbance",
        message=f"strongest absorbance {top:.3f} at {top_at:.0f} cm⁻¹", details={"position_cm1": top_at}))
    if not ok:
        invalid.append(Notice(code="saturated", message=(
            f"the strongest band reaches absorbance {top:.2f} at {top_at:.0f} cm⁻¹, above {q.max_absorbance:g}: "
            "bands this strong are distorted; use less sample, a thinner film or less ATR pressure and measure again")))

    keep = ~method.excluded_mask
    signal = float(prepared.corrected[keep].max()) if keep.any() else 0.0
    ok = signal >= q.min_absorbance
    criteria.append(Criterion(
        kind="quality", label="strongest band height (signal)", outcome="pass" if ok else "fail", measured=signal,
        limit=q.min_absorbance, comparison=">=", unit="absorbance",
        message=f"strongest band {signal:.3f} above the baseline"))
    if not ok:
        invalid.append(Notice(code="too-weak", message=(
            f"the strongest band is only {signal:.3f} absorbance above the baseline (at least {q.min_absorbance:g} "
            "needed): check contact with the ATR crystal or use more sample, and measure again")))

    lo, hi = NOISE_REGION_CM1
    noise = k.noise_rms(x, y, lo=lo, hi=hi) if lo >= method.lo and hi <= method.hi else None
    if noise is None:
        warnings.append(Notice(code="noise-not-assessed", message=(
            f"the noise region {hi:g}–{lo:g} cm⁻¹ lies outside the evaluated range or holds too few points; "
            "noise was not assessed")))
    else:
        snr = signal / noise if noise > 0 else float("inf")
        ok = snr >= MIN_SIGNAL_TO_NOISE
        criteria.append(Criterion(
            kind="quality", label="signal-to-noise", outcome="pass" if ok else "fail", measured=snr,
            limit=MIN_SIGNAL_TO_NOISE, comparison=">=", unit="ratio",
            message=f"strongest band / RMS noise in {hi:g}–{lo:g} cm⁻¹ = {snr:.0f}",
            details={"noise_rms_absorbance": noise, "noise_region_cm1": [hi, lo],
                     "method": "RMS of second differences / √6"}))
        if not ok:
            invalid.append(Notice(code="too-noisy", message=(
                f"signal-to-noise {snr:.0f} is below {MIN_SIGNAL_TO_NOISE:g}: co-add more scans or improve contact, "
                "and measure again")))

    vapour = _water_vapour(x, y, noise or 0.0, signal, method.lo, method.hi)
    if vapour is not None and vapour > MAX_WATER_VAPOUR:
        warnings.append(Notice(code="water-vapour", message=(
            f"water-vapour lines in {WATER_VAPOUR_REGION_CM1[1]:g}–{WATER_VAPOUR_REGION_CM1[0]:g} cm⁻¹ reach "
            f"{100 * vapour:.1f} % of the strongest band (limit {100 * MAX_WATER_VAPOUR:g} %): they also fall "
            "across 1900–1350 cm⁻¹; purge the instrument longer or record a fresh background")))

    low = float(prepared.corrected[keep].min()) if keep.any() else 0.0
    if signal > 0 and low < -NEGATIVE_BAND_FRACTION * signal:
        at = float(method.grid[keep][int(np.argmin(prepared.corrected[keep]))])
        warnings.append(Notice(code="negative-band", message=(
            f"a negative band of {low:.3f} absorbance at {at:.0f} cm⁻¹: was the crystal or cell clean when "
            "the background was recorded?")))
    return criteria, warnings, invalid
