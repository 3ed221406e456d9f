"""Judging one prepared spectrum against the rules of a specification, one criterion per rule.

Bands are measured on the prepared (baseline-corrected, ATR-corrected) spectrum; a band whose
maximum lies in an excluded region is ignored. Relative intensity is against the strongest
band of the evaluated range outside the exclusions (Ph. Eur. 2.2.24: bands agree in position and
*relative* size).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from service.evaluation import _kernels as k
from service.evaluation.method import Prepared
from service.evaluation.result import Criterion, Notice
from service.evaluation.specification import BandRule, ForbiddenBand

__all__ = ["EDGE_WARNING_CM1", "bands_outside_exclusions", "judge_forbidden", "judge_required"]

EDGE_WARNING_CM1 = 2.0


def bands_outside_exclusions(p: Prepared, lo: float, hi: float) -> list[k.Band]:
    """Bands of the prepared spectrum with their maximum inside ``lo``–``hi``, strongest first."""
    found = [b for b in p.bands if lo <= b.position_cm1 <= hi]
    found.sort(key=lambda b: -b.height)
    return found


def _band_details(b: k.Band) -> dict[str, Any]:
    return {"position_cm1": round(b.position_cm1, 2), "relative_intensity": b.relative_intensity,
            "height_prepared": b.height, "width_cm1": round(b.fwhm_cm1, 1), "strength": b.strength,
            "shape": b.shape, "position_method": b.position_method}


def _checks(rule: BandRule, b: k.Band) -> list[dict[str, Any]]:
    out = []

    def add(name: str, measured: float, limit: float, comparison: str, ok: bool) -> None:
        out.append({"name": name, "measured": measured, "limit": limit, "comparison": comparison,
                    "outcome": "pass" if ok else "fail"})

    if rule.min_relative_intensity is not None:
        add("relative intensity", b.relative_intensity, rule.min_relative_intensity, ">=",
            b.relative_intensity >= rule.min_relative_intensity)
    if rule.max_relative_intensity is not None:
        add("relative intensity", b.relative_intensity, rule.max_relative_intensity, "<=",
            b.relative_intensity <= rule.max_relative_intensity)
    if rule.min_width is not None:
        add("width (cm⁻¹)", b.fwhm_cm1, rule.min_width, ">=", b.fwhm_cm1 >= rule.min_width)
    if rule.max_width is not None:
        add("width (cm⁻¹)", b.fwhm_cm1, rule.max_width, "<=", b.fwhm_cm1 <= rule.max_width)
    if rule.position is not None and rule.tolerance is not None:
        off = abs(b.position_cm1 - rule.position)
        add(f"position offset from {rule.position:g} (cm⁻¹)", off, rule.tolerance, "<=", off <= rule.tolerance)
    return out


def judge_required(p: Prepared, rule: BandRule) -> tuple[Criterion, list[Notice]]:
    """Pass if a band in the window meets every limit of the rule; report the best candidate either way."""
    lo, hi = rule.window
    found = bands_outside_exclusions(p, lo, hi)
    limit = rule.min_relative_intensity
    if not found:
        return Criterion(kind="required_band", label=rule.label, outcome="fail", measured=None, limit=limit,
                         comparison=">=" if limit is not None else None, unit="relative intensity",
                         message=f"no band found between {hi:g} and {lo:g} cm⁻¹",
                         details={"window_cm1": [hi, lo], "bands_in_window": 0, "checks": []}), []
    if rule.position is not None:
        found.sort(key=lambda b: abs(b.position_cm1 - rule.position))  # type: ignore[operator]
    scored = [(b, _checks(rule, b)) for b in found]
    passing = [(b, c) for b, c in scored if all(x["outcome"] == "pass" for x in c)]
    band, checks = passing[0] if passing else scored[0]
    ok = bool(passing)
    d = _band_details(band)
    msg = (f"band at {d['position_cm1']:.1f} cm⁻¹, relative intensity {band.relative_intensity:.2f}, "
           f"width {d['width_cm1']:.0f} cm⁻¹")
    if not ok:
        failed = [f"{x['name']} {x['measured']:.3g} not {x['comparison']} {x['limit']:g}" for x in checks
                  if x["outcome"] == "fail"]
        msg += "; " + "; ".join(failed)
    notices = []
    if min(band.position_cm1 - lo, hi - band.position_cm1) <= EDGE_WARNING_CM1:
        notices.append(Notice(code="band-near-window-edge",
                              message=f"{rule.label}: band at {band.position_cm1:.1f} cm⁻¹ lies within "
                                      f"{EDGE_WARNING_CM1:g} cm⁻¹ of its window's edge ({hi:g}–{lo:g})"))
    return Criterion(kind="required_band", label=rule.label, outcome="pass" if ok else "fail",
                     measured=band.relative_intensity, limit=limit, comparison=">=" if limit is not None else None,
                     unit="relative intensity", message=msg,
                     details={"window_cm1": [hi, lo], "band": d, "bands_in_window": len(found), "checks": checks}
                     ), notices


def judge_forbidden(p: Prepared, rule: ForbiddenBand) -> tuple[Criterion, list[Notice]]:
    """Fail if a band in the window exceeds the tolerated relative intensity."""
    lo, hi = rule.window
    found = bands_outside_exclusions(p, lo, hi)
    measured = found[0].relative_intensity if found else 0.0
    sel = p.method.kept_between(lo, hi)
    values = p.final[sel]
    strongest = float(values.max()) if sel.size else float("nan")
    where = float(p.method.grid[sel[int(np.argmax(values))]]) if sel.size else float("nan")
    ok = measured <= rule.max_relative_intensity
    details: dict[str, Any] = {
        "window_cm1": [hi, lo], "bands_in_window": len(found),
        "band": _band_details(found[0]) if found else None,
        "strongest_absorbance_in_window": strongest, "strongest_absorbance_at_cm1": where,
        "strongest_absorbance_relative": strongest / p.reference_height if p.reference_height > 0 else None,
    }
    if found:
        msg = (f"strongest band in the window at {found[0].position_cm1:.1f} cm⁻¹, relative intensity "
               f"{measured:.3f} ({'within' if ok else 'above'} the tolerated {rule.max_relative_intensity:g})")
    else:
        msg = f"no band between {hi:g} and {lo:g} cm⁻¹ (strongest absorbance there {strongest:.3g} at {where:.0f} cm⁻¹)"
    notices = []
    near_edge = bool(found) and min(found[0].position_cm1 - lo, hi - found[0].position_cm1) <= EDGE_WARNING_CM1
    if near_edge and measured >= 0.5 * rule.max_relative_intensity:
        notices.append(Notice(code="band-near-window-edge",
                              message=f"{rule.label}: band at {found[0].position_cm1:.1f} cm⁻¹ lies within "
                                      f"{EDGE_WARNING_CM1:g} cm⁻¹ of the forbidden window's edge"))
    return Criterion(kind="forbidden_band", label=rule.label, outcome="pass" if ok else "fail", measured=measured,
                     limit=rule.max_relative_intensity, comparison="<=", unit="relative intensity", message=msg,
                     details=details), notices
