"""Suggest required-band rows for a new specification version from the approved reference.

The reference's bands are measured with the spectral core's ``find_bands`` (absorbance, bands as
maxima); the strongest become rows with a window around each measured position and a minimum
relative intensity of half the reference's. Each row carries a group-frequency hint (a *hint*,
never a rule) from the standard correlation tables: UCLA WebSpectra and UMass OWL IR tables, as
summarised in ``../shared/domain.md``. A person checks every row before saving.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy.engine import Engine

from service.errors import Conflict

MAX_ROWS = 8
MIN_RELATIVE = 0.1
HALF_WINDOW_MIN_CM1 = 8.0
HALF_WINDOW_MAX_CM1 = 30.0

# (low, high, hint) cm⁻¹; UCLA WebSpectra / UMass OWL group-frequency tables (domain.md).
GROUP_FREQUENCIES: tuple[tuple[float, float, str], ...] = (
    (3610, 3640, "O–H free"), (3200, 3550, "O–H hydrogen-bonded"), (3300, 3500, "N–H"),
    (3270, 3330, "≡C–H"), (3000, 3100, "aromatic or =C–H"), (2850, 3000, "C–H alkane"),
    (2695, 2830, "aldehyde C–H"), (2500, 3300, "O–H carboxylic acid (very broad)"),
    (2210, 2260, "C≡N"), (2100, 2260, "C≡C"), (1790, 1810, "C=O acid chloride"), (1735, 1750, "C=O ester"),
    (1720, 1740, "C=O aldehyde"), (1705, 1725, "C=O ketone"), (1690, 1760, "C=O carboxylic acid"),
    (1665, 1710, "C=O conjugated"), (1630, 1690, "C=O amide I"), (1640, 1680, "C=C"),
    (1585, 1600, "aromatic ring"), (1400, 1500, "aromatic ring"), (1475, 1550, "NO₂"), (1290, 1360, "NO₂"),
    (1000, 1320, "C–O"), (675, 900, "aromatic C–H out-of-plane"), (550, 850, "C–Cl"),
)


def hints_for(position_cm1: float) -> str:
    found = [h for lo, hi, h in GROUP_FREQUENCIES if lo <= position_cm1 <= hi]
    if not found:
        return "fingerprint region: specific to the compound" if position_cm1 < 1500 else ""
    return " or ".join(dict.fromkeys(found))


def suggest_rows(x: Any, y: Any, *, window: tuple[float, float] | None = None) -> list[dict[str, Any]]:
    """Rows for the strongest bands of an absorbance spectrum (x ascending), strongest first."""
    from service.spectra import find_bands

    bands = [b for b in find_bands(x, y, window=window, min_prominence=0.01)
             if b.relative_intensity >= MIN_RELATIVE]
    bands = sorted(bands, key=lambda b: b.relative_intensity, reverse=True)[:MAX_ROWS]
    rows = []
    for b in sorted(bands, key=lambda b: b.position_cm1, reverse=True):
        half = min(HALF_WINDOW_MAX_CM1, max(HALF_WINDOW_MIN_CM1, round(0.5 * b.fwhm_cm1)))
        pos = round(b.position_cm1, 1)
        hint = hints_for(pos)
        rows.append({"label": f"{pos:g}" + (f" ({hint})" if hint else ""), "from": round(pos + half),
                     "to": round(pos - half), "min_relative_intensity": round(0.5 * b.relative_intensity, 2),
                     "position_cm1": pos, "hint": hint})
    return rows


def suggest_from_reference(engine: Engine, material_code: str) -> list[dict[str, Any]]:
    """Rows from the material's approved reference spectrum; Conflict if there is none."""
    from service.evaluation.method import as_absorbance
    from service.services import evaluator
    from service.services import specifications as spec_uc

    refs = spec_uc.list_references(engine, material_code=material_code, status="approved")
    if not refs:
        raise Conflict(f"material {material_code} has no approved reference spectrum to suggest bands from; "
                       "upload and approve a reference first")
    ref, data = spec_uc.reference_file(engine, refs[-1].id)
    spectrum = as_absorbance(evaluator.read_spectrum(data, file_name=ref.file_name))
    return suggest_rows(spectrum.x, spectrum.y)
