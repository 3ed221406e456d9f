"""Sample preparations and the spectral regions each one spoils.

A preparation is part of the method (USP <197>, ASTM E1252): sample and reference must be
prepared the same way, and each preparation brings regions where the spectrum shows the
atmosphere, the crystal, the mulling agent or the solvent rather than the material. Those regions
are excluded from the comparison by default and listed in every evaluation.

Region values are the usual interference regions of the trade (common practice; solvent and
crystal limits from memory, see ``docs/evaluation.md``).
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "ALWAYS_EXCLUDED",
    "PREPARATIONS",
    "SOLVENTS",
    "ExcludedRegion",
    "Preparation",
    "excluded_regions",
    "get_preparation",
]


@dataclass(frozen=True, kw_only=True)
class ExcludedRegion:
    """A wavenumber interval (cm⁻¹, ``lo < hi``) left out of the comparison, and why."""

    lo: float
    hi: float
    reason: str
    source: str  # "atmosphere", "preparation", "solvent" or "specification"

    def overlaps(self, lo: float, hi: float) -> bool:
        return self.lo < hi and lo < self.hi

    def covers(self, lo: float, hi: float) -> bool:
        return self.lo <= lo and hi <= self.hi

    def as_dict(self) -> dict[str, object]:
        return {"from": _num(self.hi), "to": _num(self.lo), "reason": self.reason, "source": self.source}


def _num(v: float) -> float | int:
    return int(v) if float(v).is_integer() else float(v)


# Atmospheric interference, excluded for every preparation. Water-vapour lines also fall across
# 1900–1350 cm⁻¹, but that region carries the double-bond and aromatic bands on which identity
# rests: there the vapour level is measured and warned about instead of being masked.
ALWAYS_EXCLUDED: tuple[ExcludedRegion, ...] = (
    ExcludedRegion(lo=3650.0, hi=3950.0, reason="atmospheric water vapour (rotation-vibration lines)",
                   source="atmosphere"),
    ExcludedRegion(lo=2280.0, hi=2400.0, reason="atmospheric CO₂ (asymmetric stretch)", source="atmosphere"),
    ExcludedRegion(lo=655.0, hi=680.0, reason="atmospheric CO₂ (bending, near 667)", source="atmosphere"),
)


@dataclass(frozen=True, kw_only=True)
class Preparation:
    """One way of presenting a sample to the spectrometer.

    ``usable_lo`` is the lowest wavenumber the optics pass; ``atr_crystal_index`` is set for ATR
    (the refractive index used only to document the penetration-depth correction).
    """

    code: str
    description: str
    usable_lo: float
    exclusions: tuple[ExcludedRegion, ...] = ()
    atr_crystal_index: float | None = None
    needs_solvent: bool = False

    @property
    def is_atr(self) -> bool:
        return self.atr_crystal_index is not None


def _prep(code: str, description: str, usable_lo: float, *regions: tuple[float, float, str],
          atr: float | None = None, needs_solvent: bool = False) -> Preparation:
    return Preparation(
        code=code, description=description, usable_lo=usable_lo, atr_crystal_index=atr, needs_solvent=needs_solvent,
        exclusions=tuple(ExcludedRegion(lo=lo, hi=hi, reason=r, source="preparation") for lo, hi, r in regions),
    )


PREPARATIONS: dict[str, Preparation] = {
    p.code: p
    for p in (
        _prep("atr-diamond", "ATR, single-reflection diamond crystal", 400.0,
              (1900.0, 2300.0, "diamond crystal absorption (weak, noisy)"), atr=2.4),
        _prep("atr-znse", "ATR, zinc selenide crystal", 650.0, atr=2.4),
        _prep("atr-ge", "ATR, germanium crystal", 800.0, atr=4.0),
        _prep("kbr-disc", "pressed potassium bromide disc (transmission)", 400.0),
        _prep("mineral-oil-mull", "mull in mineral oil between salt plates (transmission)", 400.0,
              (2800.0, 2950.0, "mineral oil C–H stretch (very strong)"),
              (1450.0, 1465.0, "mineral oil CH₂/CH₃ bend"),
              (1370.0, 1380.0, "mineral oil CH₃ bend"),
              (710.0, 730.0, "mineral oil CH₂ rock")),
        _prep("film", "cast or pressed film (transmission)", 400.0),
        _prep("solution", "solution in a cell (transmission); name the solvent", 400.0, needs_solvent=True),
        _prep("neat-liquid", "neat liquid between salt plates or in a cell (transmission)", 400.0),
    )
}

# Solvent bands that swamp a solution spectrum (from memory; confirm against the solvent's own
# spectrum measured in the lab's cell before relying on them).
SOLVENTS: dict[str, tuple[tuple[float, float, str], ...]] = {
    "chloroform": ((3000.0, 3040.0, "chloroform C–H stretch"), (1200.0, 1240.0, "chloroform C–H bend"),
                   (650.0, 800.0, "chloroform C–Cl stretch")),
    "dichloromethane": ((3040.0, 3070.0, "dichloromethane C–H stretch"), (1250.0, 1280.0, "dichloromethane CH₂ wag"),
                        (700.0, 780.0, "dichloromethane C–Cl stretch")),
    "carbon-tetrachloride": ((1530.0, 1580.0, "carbon tetrachloride combination band"),
                             (720.0, 820.0, "carbon tetrachloride C–Cl stretch")),
    "carbon-disulfide": ((2120.0, 2220.0, "carbon disulfide combination band"),
                         (1480.0, 1560.0, "carbon disulfide C=S stretch")),
}


def get_preparation(code: str) -> Preparation:
    """The preparation named ``code``; ``KeyError`` if there is none (the specification checks first)."""
    return PREPARATIONS[code]


def excluded_regions(code: str, solvent: str | None = None) -> tuple[ExcludedRegion, ...]:
    """Default excluded regions of a preparation: the atmosphere's, the preparation's and the solvent's."""
    prep = PREPARATIONS[code]
    regions = list(ALWAYS_EXCLUDED) + list(prep.exclusions)
    if solvent:
        regions += [ExcludedRegion(lo=lo, hi=hi, reason=r, source="solvent") for lo, hi, r in SOLVENTS[solvent]]
    return tuple(sorted(regions, key=lambda r: -r.hi))
