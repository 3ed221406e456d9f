"""Hints for specification authors: a reference's bands with their usual group-frequency assignment.

The table is the usual one of university IR tables (UCLA WebSpectra, UMass OWL) and handbooks, as
collected in ``../shared/domain.md``. An assignment is a *starting point* for a required band, not
an identification: several groups absorb in the same region and the author decides.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from service.evaluation.method import Method, prepare
from service.evaluation.criteria import bands_outside_exclusions
from service.evaluation.preparations import excluded_regions
from service.spectra.model import Spectrum

__all__ = ["GROUP_FREQUENCIES", "GroupFrequency", "BandSuggestion", "suggest_bands"]


@dataclass(frozen=True, kw_only=True)
class GroupFrequency:
    group: str
    lo: float
    hi: float
    intensity: str  # as tabulated: s, m, w, v, b


GROUP_FREQUENCIES: tuple[GroupFrequency, ...] = tuple(
    GroupFrequency(group=g, lo=lo, hi=hi, intensity=i) for g, lo, hi, i in (
        ("O–H free", 3610, 3640, "s, sharp"),
        ("O–H hydrogen-bonded", 3200, 3550, "s, broad"),
        ("O–H carboxylic acid", 2500, 3300, "very broad"),
        ("N–H", 3300, 3500, "m"),
        ("≡C–H", 3270, 3330, "s"),
        ("aromatic / =C–H stretch", 3000, 3100, "m"),
        ("C–H alkane stretch", 2850, 3000, "m–s"),
        ("aldehyde C–H", 2695, 2830, "m"),
        ("C≡N", 2210, 2260, "m, sharp"),
        ("C≡C", 2100, 2260, "w"),
        ("C=O acid chloride", 1790, 1810, "s"),
        ("C=O ester", 1735, 1750, "s"),
        ("C=O aldehyde", 1720, 1740, "s"),
        ("C=O ketone", 1705, 1725, "s"),
        ("C=O carboxylic acid", 1690, 1760, "s"),
        ("C=O conjugated", 1665, 1710, "s"),
        ("amide I", 1630, 1690, "s"),
        ("C=C", 1640, 1680, "m/v"),
        ("aromatic ring", 1585, 1600, "m"),
        ("NO₂ asymmetric", 1475, 1550, "s"),
        ("aromatic ring", 1400, 1500, "m"),
        ("NO₂ symmetric", 1290, 1360, "m"),
        ("C–O", 1000, 1320, "s"),
        ("aromatic C–H out-of-plane", 675, 900, "s"),
        ("C–Cl", 550, 850, "m"),
    )
)


@dataclass(frozen=True, kw_only=True)
class BandSuggestion:
    position_cm1: float
    relative_intensity: float
    width_cm1: float
    strength: str
    shape: str
    assignments: tuple[str, ...]

    def as_dict(self) -> dict[str, Any]:
        return {"position_cm1": round(self.position_cm1, 1), "relative_intensity": round(self.relative_intensity, 3),
                "width_cm1": round(self.width_cm1, 1), "strength": self.strength, "shape": self.shape,
                "assignments": list(self.assignments)}

    def rule(self, *, half_window: float | None = None) -> dict[str, Any]:
        """A required-band rule to start from: window around the band, 60 % of its relative intensity."""
        h = half_window if half_window is not None else max(10.0, min(100.0, self.width_cm1))
        return {"label": self.assignments[0] if self.assignments else f"band at {self.position_cm1:.0f}",
                "from": round(self.position_cm1 + h), "to": round(self.position_cm1 - h),
                "min_relative_intensity": round(0.6 * self.relative_intensity, 2)}


def assign(position_cm1: float, table: Sequence[GroupFrequency] = GROUP_FREQUENCIES) -> tuple[str, ...]:
    """Groups whose tabulated region holds the position, narrowest region first."""
    hits = [g for g in table if g.lo <= position_cm1 <= g.hi]
    hits.sort(key=lambda g: g.hi - g.lo)
    return tuple(f"{g.group} ({g.hi:g}–{g.lo:g}, {g.intensity})" for g in hits)


def suggest_bands(reference: Spectrum, *, preparation: str = "atr-diamond", lo: float | None = None,
                  hi: float | None = None, min_relative_intensity: float = 0.05) -> list[BandSuggestion]:
    """The reference's bands (prepared as an evaluation would), strongest first, with assignments."""
    x0, x1 = reference.range_cm1
    method = Method(lo=max(lo if lo is not None else 650.0, x0), hi=min(hi if hi is not None else 4000.0, x1),
                    atr_correction=preparation.startswith("atr-"),
                    excluded=tuple((r.lo, r.hi) for r in excluded_regions(preparation)))
    prepared = prepare(reference, method)
    found = bands_outside_exclusions(prepared, method.lo, method.hi)
    out = [BandSuggestion(position_cm1=b.position_cm1, relative_intensity=b.relative_intensity, width_cm1=b.fwhm_cm1,
                          strength=b.strength, shape=b.shape, assignments=assign(b.position_cm1))
           for b in found if b.relative_intensity >= min_relative_intensity]
    return sorted(out, key=lambda b: -b.relative_intensity)
