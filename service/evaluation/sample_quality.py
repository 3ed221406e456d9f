"""Can this measurement be judged at all? Quality criteria on the sample spectrum.

What a trained analyst checks by eye (common practice): the strongest band not saturated
(absorbance ≲ 1.5) and not too weak (≳ 0.1), noise in a band-free region small against the bands,
no negative bands. A failed quality criterion makes the evaluation *invalid* (measure again), not
failed; suspicious but usable findings become warnings.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from service.evaluation import _kernels as k
from service.evaluation._axis import QualityPlan, quality_plan
from service.evaluation.method import Method, Prepared
from service.evaluation.result import Criterion, Notice
from service.evaluation.specification import Specification
from service.spectra import QualityLimits, SavitzkyGolay
from service.spectra.model import Spectrum

__all__ = ["MIN_SIGNAL_TO_NOISE", "NOISE_REGION_CM1", "judge_quality", "quality_plan_for"]

MIN_SIGNAL_TO_NOISE = 30.0  # strongest band height / RMS noise (common practice: bands far above the noise)
NOISE_REGION_CM1 = (2000.0, 2200.0)  # band-free for most organics (common practice)
NEGATIVE_BAND_FRACTION = 0.10
WATER_VAPOUR_REGION_CM1 = (3650.0, 3950.0)  # rotation-vibration lines, above the sample O–H bands
MAX_WATER_VAPOUR = QualityLimits().max_water_vapour  # sharp-line residual / strongest band (the core's default)


def _highest(x: np.ndarray, y: np.ndarray, keep: np.ndarray) -> tuple[float, float]:
    """Highest value (and where) of the original points at the indices ``keep``: the first such point if tied."""
    if keep.size == 0:
        return float("nan"), float("nan")
    i = int(keep[int(np.argmax(y[keep]))])
    top = float(y[i])
    return (top if np.isfinite(top) else float("nan")), float(x[i])


@lru_cache(maxsize=16)
def _smoother(window: int) -> SavitzkyGolay:
    return SavitzkyGolay(window=window, polyorder=2)


def _water_vapour(y: np.ndarray, noise: float, signal: float, region: tuple[int, int, int] | None) -> float | None:
    """Sharp-line residual (values minus a ~25 cm⁻¹ Savitzky–Golay smooth) beyond the noise, per strongest band.

    The same measure as the spectral core's quality report, on the vapour region only
    (``region``: its index range and the smoothing window, from the axis plan).
    """
    if region is None or signal <= 0:
        return None
    i0, i1, window = region
    seg = y[i0:i1]
    resid = seg - _smoother(window).apply(seg)
    rms = math.sqrt(k.mean(resid * resid))
    return float(np.sqrt(max(0.0, rms * rms - noise * noise))) / signal


def quality_plan_for(x: np.ndarray, method: Method, *, axis_key: bytes | None = None) -> QualityPlan:
    """The index ranges :func:`judge_quality` reads on axis ``x`` (remembered per axis key when one is given)."""
    return quality_plan(axis_key, x, method, noise_region=NOISE_REGION_CM1, vapour_region=WATER_VAPOUR_REGION_CM1)


def judge_quality(absorbance: Spectrum, prepared: Prepared, spec: Specification, *, plan: QualityPlan | None = None
                  ) -> tuple[list[Criterion], list[Notice], list[Notice]]:
    """Quality criteria, warnings and reasons for *invalid* for the sample (already in absorbance).

    ``plan`` is :func:`quality_plan_for` of the sample's axis and the method (worked out here if not given).
    """
    method = prepared.method
    criteria: list[Criterion] = []
    warnings: list[Notice] = []
    invalid: list[Notice] = []
    x, y = absorbance.x, absorbance.y
    if plan is None:
        plan = quality_plan_for(x, method)
    top, top_at = _highest(x, y, plan.highest)
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

    keep = method.kept_mask
    kept = prepared.corrected[keep]
    signal = float(kept.max()) if kept.size else 0.0
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
    noise = None if plan.noise is None else k.noise_rms_between(y, *plan.noise)
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

    vapour = _water_vapour(y, noise or 0.0, signal, plan.vapour)
    if vapour is not None and vapour > MAX_WATER_VAPOUR:
        warnings.append(Notice(code="water-vapour", message=(
            f"water-vapour lines in {WATER_VAPOUR_REGION_CM1[1]:g}–{WATER_VAPOUR_REGION_CM1[0]:g} cm⁻¹ reach "
            f"{100 * vapour:.1f} % of the strongest band (limit {100 * MAX_WATER_VAPOUR:g} %): they also fall "
            "across 1900–1350 cm⁻¹; purge the instrument longer or record a fresh background")))

    low = float(kept.min()) if kept.size else 0.0
    if signal > 0 and low < -NEGATIVE_BAND_FRACTION * signal:
        at = float(method.grid[keep][int(np.argmin(kept))])
        warnings.append(Notice(code="negative-band", message=(
            f"a negative band of {low:.3f} absorbance at {at:.0f} cm⁻¹: was the crystal or cell clean when "
            "the background was recorded?")))
    return criteria, warnings, invalid
