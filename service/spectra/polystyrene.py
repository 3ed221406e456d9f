"""Instrument check with a polystyrene film: wavenumber scale and resolution (Ph. Eur. 2.2.24).

Band positions are absorbance maxima (= transmittance minima) located to sub-point precision by
a 3-point parabola; each must lie within the tolerance of its reference value. The resolution
criteria for FT instruments compare the absorbance at a band maximum with that at a nearby
minimum. Reference values and tolerances as quoted in Ph. Eur. 2.2.24 (the same values appear in
the JP); they are *from memory* in ``../shared/domain.md`` and must be confirmed against the
current edition before release-critical use.

The result is advice about the instrument's state for qualified staff; local procedures decide.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from service.errors import UnusableInput
from service.spectra.bands import parabolic_offset
from service.spectra.conversion import to_absorbance
from service.spectra.model import Spectrum, YKind


class PolystyreneCheckError(UnusableInput):
    """The spectrum cannot be used for the instrument check (wrong kind, range or spacing)."""

    code = "unusable-polystyrene-spectrum"
    title = "Spectrum cannot be used for the polystyrene check"


@dataclass(frozen=True)
class ReferenceBand:
    position_cm1: float
    tolerance_cm1: float


#: Ph. Eur. 2.2.24 wavenumber-scale check values (cm⁻¹) and tolerances (from memory, see module doc).
PH_EUR_BANDS: tuple[ReferenceBand, ...] = (
    ReferenceBand(3060.0, 1.5), ReferenceBand(2849.5, 1.5), ReferenceBand(1942.9, 1.5),
    ReferenceBand(1601.2, 1.0), ReferenceBand(1583.0, 1.0), ReferenceBand(1154.5, 1.0),
    ReferenceBand(1028.3, 1.0),
)


@dataclass(frozen=True)
class ResolutionCriterion:
    """A(maximum near ``band_cm1``) − A(minimum near ``valley_cm1``) must exceed ``min_difference``."""

    band_cm1: float
    valley_cm1: float
    min_difference: float


#: Ph. Eur. 2.2.24 resolution criteria for FT instruments, ~35 µm film (from memory, see module doc).
PH_EUR_RESOLUTION: tuple[ResolutionCriterion, ...] = (
    ResolutionCriterion(2849.5, 2870.0, 0.33),
    ResolutionCriterion(1583.0, 1589.0, 0.08),
)

SEARCH_HALF_WIDTH_CM1 = 5.0  # a band maximum is looked for within ±5 cm⁻¹ of its reference value
VALLEY_HALF_WIDTH_CM1 = 3.0  # a minimum within ±3 cm⁻¹ of its nominal position
MAX_SPACING_CM1 = 2.0  # coarser data cannot place a band to ±1 cm⁻¹ reliably


@dataclass(frozen=True)
class CheckItem:
    name: str
    measured: float | None
    limit: str
    outcome: Literal["pass", "fail"]
    detail: str = ""
    limit_low: float | None = None  # the limit as numbers: measured must lie in [low, high] (or exceed low)
    limit_high: float | None = None

    def as_dict(self) -> dict[str, Any]:
        return {"name": self.name, "measured": self.measured, "limit": self.limit, "outcome": self.outcome,
                "detail": self.detail, "limit_low": self.limit_low, "limit_high": self.limit_high}


@dataclass(frozen=True)
class InstrumentCheck:
    passed: bool
    checks: tuple[CheckItem, ...]
    source: str = "Ph. Eur. 2.2.24 (values from memory; confirm against the current edition)"
    caution: str = ("Advice to qualified staff on the instrument's state, not a qualification by itself; "
                    "local procedures and the pharmacopoeia in force decide.")

    def as_dict(self) -> dict[str, Any]:
        return {"passed": self.passed, "outcome": "pass" if self.passed else "fail", "source": self.source,
                "caution": self.caution, "checks": [c.as_dict() for c in self.checks]}


def _absorbance(spectrum: Spectrum) -> NDArray[np.float64]:
    if spectrum.kind not in (YKind.absorbance, YKind.transmittance, YKind.percent_transmittance):
        raise PolystyreneCheckError(
            f"the polystyrene check needs absorbance or transmittance, not {spectrum.kind.value}"
        )
    # T <= 0 is clipped (and noted) by the conversion; bands there are saturated anyway
    return np.asarray(to_absorbance(spectrum).y, dtype=np.float64)


def _band_maximum(x: NDArray[np.float64], a: NDArray[np.float64], centre: float) -> float | None:
    """Sub-point position (3-point parabola) of the highest local maximum within the search window."""
    sel = np.flatnonzero((x >= centre - SEARCH_HALF_WIDTH_CM1) & (x <= centre + SEARCH_HALF_WIDTH_CM1))
    sel = sel[(sel > 0) & (sel < x.size - 1)]
    if sel.size == 0:
        return None
    is_max = (a[sel] >= a[sel - 1]) & (a[sel] > a[sel + 1])
    cands = sel[is_max]
    if cands.size == 0:
        return None
    i = int(cands[np.argmax(a[cands])])
    delta = parabolic_offset(float(a[i - 1]), float(a[i]), float(a[i + 1]))
    step = (x[i + 1] - x[i]) if delta >= 0 else (x[i] - x[i - 1])
    return float(x[i] + delta * step)


def _extreme_value(x: NDArray[np.float64], a: NDArray[np.float64], centre: float, half: float,
                   kind: str) -> float | None:
    sel = (x >= centre - half) & (x <= centre + half)
    if not sel.any():
        return None
    return float(a[sel].max() if kind == "max" else a[sel].min())


def check_polystyrene(
    spectrum: Spectrum,
    *,
    bands: tuple[ReferenceBand, ...] = PH_EUR_BANDS,
    resolution: tuple[ResolutionCriterion, ...] = PH_EUR_RESOLUTION,
) -> InstrumentCheck:
    """Check a polystyrene film spectrum against reference band positions and resolution criteria.

    Parameters
    ----------
    spectrum : Spectrum
        Absorbance, transmittance or percent transmittance; must cover every reference band and
        have points no more than 2 cm⁻¹ apart.

    Raises
    ------
    PolystyreneCheckError
        When the spectrum cannot be used at all (kind, range, spacing); a spectrum that can be
        measured but is off is a failed check, not an error.
    """
    x = spectrum.x
    a = _absorbance(spectrum)
    needed_lo = min(min(b.position_cm1 for b in bands), min(min(r.band_cm1, r.valley_cm1) for r in resolution))
    needed_hi = max(max(b.position_cm1 for b in bands), max(max(r.band_cm1, r.valley_cm1) for r in resolution))
    margin = SEARCH_HALF_WIDTH_CM1 + 1.0
    if x[0] > needed_lo - margin or x[-1] < needed_hi + margin:
        raise PolystyreneCheckError(
            f"the spectrum covers {x[0]:g}–{x[-1]:g} cm⁻¹; the polystyrene check needs at least "
            f"{needed_lo - margin:g}–{needed_hi + margin:g} cm⁻¹: record the film over the full range"
        )
    spacing = spectrum.spacing_cm1
    if spacing > MAX_SPACING_CM1:
        raise PolystyreneCheckError(
            f"points are {spacing:.3g} cm⁻¹ apart; the check needs at most {MAX_SPACING_CM1:g} cm⁻¹ "
            "(record at 2 cm⁻¹ resolution or better, or with zero filling)"
        )
    items: list[CheckItem] = []
    for ref in bands:
        pos = _band_maximum(x, a, ref.position_cm1)
        name = f"band {ref.position_cm1:.1f} cm⁻¹"
        limit = f"{ref.position_cm1:.1f} ± {ref.tolerance_cm1:.1f} cm⁻¹"
        bounds = {"limit_low": ref.position_cm1 - ref.tolerance_cm1, "limit_high": ref.position_cm1 + ref.tolerance_cm1}
        if pos is None:
            items.append(CheckItem(name, None, limit, "fail",
                                   f"no absorbance maximum within ±{SEARCH_HALF_WIDTH_CM1:g} cm⁻¹", **bounds))
            continue
        dev = pos - ref.position_cm1
        ok = abs(dev) <= ref.tolerance_cm1 + 1e-9
        items.append(CheckItem(name, round(pos, 2), limit, "pass" if ok else "fail",
                               f"maximum at {pos:.2f} cm⁻¹ ({dev:+.2f} cm⁻¹), 3-point parabola", **bounds))
    for crit in resolution:
        top = _extreme_value(x, a, crit.band_cm1, 1.0 + spacing, "max")
        low = _extreme_value(x, a, crit.valley_cm1, VALLEY_HALF_WIDTH_CM1, "min")
        name = f"resolution A({crit.band_cm1:g}) − A({crit.valley_cm1:g})"
        limit = f"> {crit.min_difference:g}"
        if top is None or low is None:
            items.append(CheckItem(name, None, limit, "fail", "band or minimum not found",
                                   limit_low=crit.min_difference))
            continue
        diff = top - low
        items.append(CheckItem(name, round(diff, 4), limit, "pass" if diff > crit.min_difference else "fail",
                               f"A(max near {crit.band_cm1:g}) = {top:.4f}, A(min near {crit.valley_cm1:g}) = {low:.4f}",
                               limit_low=crit.min_difference))
    return InstrumentCheck(passed=all(i.outcome == "pass" for i in items), checks=tuple(items))
