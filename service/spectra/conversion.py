"""Conversion between transmittance (fraction), percent transmittance and absorbance.

Absorbance is defined from transmittance as A = −log10(T) = 2 − log10(%T) (IUPAC Gold Book,
"absorbance"; Beer-Lambert law). A transmittance of zero or below has no absorbance: such
points are clipped to a floor and the clipping is written into a note on the spectrum, never
done silently. Reflectance and Kubelka-Munk values are not converted (they need a model of
the sample, not a unit change).
"""

from __future__ import annotations

import numpy as np

from service.spectra.model import Spectrum, SpectrumError, YKind

#: Smallest transmittance (fraction) used when clipping: A = 6, beyond any real measurement.
T_FLOOR = 1e-6


def _fraction(spectrum: Spectrum) -> np.ndarray:
    if spectrum.kind is YKind.transmittance:
        return np.asarray(spectrum.y, dtype=np.float64)
    if spectrum.kind is YKind.percent_transmittance:
        return np.asarray(spectrum.y, dtype=np.float64) / 100.0
    if spectrum.kind is YKind.absorbance:
        return np.power(10.0, -np.asarray(spectrum.y, dtype=np.float64))
    raise SpectrumError(
        f"{spectrum.kind.value} values cannot be converted to transmittance or absorbance by a unit change"
    )


def to_absorbance(spectrum: Spectrum) -> Spectrum:
    """The spectrum as absorbance, A = −log10(T).

    Points with T ≤ 0 (noise around a saturated band, or a bad export) are clipped to
    ``T_FLOOR`` and counted in a note; values above T = 1 convert to small negative absorbance
    as they are (that is information, not an error).
    """
    if spectrum.kind is YKind.absorbance:
        return spectrum
    t = _fraction(spectrum)
    bad = t <= 0
    note = f"converted from {spectrum.kind.value} to absorbance (A = -log10 T)"
    if bad.any():
        n = int(bad.sum())
        i = int(np.flatnonzero(bad)[0])
        note += (f"; {n} point(s) with transmittance at or below zero (first at {spectrum.x[i]:.2f} cm⁻¹) "
                 f"clipped to T = {T_FLOOR:g} (A = {-np.log10(T_FLOOR):g})")
        t = np.where(bad, T_FLOOR, t)
    return spectrum.with_values(-np.log10(t), YKind.absorbance, note=note)


def to_transmittance(spectrum: Spectrum) -> Spectrum:
    """The spectrum as transmittance (fraction), T = 10^(−A)."""
    if spectrum.kind is YKind.transmittance:
        return spectrum
    return spectrum.with_values(
        _fraction(spectrum), YKind.transmittance,
        note=f"converted from {spectrum.kind.value} to transmittance (fraction)",
    )


def to_percent_transmittance(spectrum: Spectrum) -> Spectrum:
    """The spectrum as percent transmittance, %T = 100·T = 100·10^(−A)."""
    if spectrum.kind is YKind.percent_transmittance:
        return spectrum
    return spectrum.with_values(
        100.0 * _fraction(spectrum), YKind.percent_transmittance,
        note=f"converted from {spectrum.kind.value} to percent transmittance",
    )
