"""Spectrum synthesis from band lists: pseudo-Voigt bands, a gentle baseline, seeded noise.

Pure numpy. Every random draw comes from a ``numpy.random.Generator`` handed in by the caller, so one
seed reproduces one file exactly.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

FOUR_LN2 = 4.0 * np.log(2.0)


@dataclass(frozen=True, kw_only=True)
class BandShape:
    """One absorption band: centre (cm⁻¹), peak absorbance, full width at half maximum (cm⁻¹), and the
    Lorentzian share ``eta`` of the pseudo-Voigt profile (0 = Gaussian, 1 = Lorentzian)."""

    position: float
    height: float
    fwhm: float
    eta: float = 0.5
    note: str = ""


def pseudo_voigt(x: np.ndarray, band: BandShape) -> np.ndarray:
    """A pseudo-Voigt profile, η·L + (1 − η)·G, both of the same FWHM and unit height at the centre.

    The linear mix of a Lorentzian and a Gaussian is the usual stand-in for a Voigt profile in
    vibrational spectra (Wertheim et al., J. Electron Spectrosc. 1974; common practice).
    """
    u = (x - band.position) / band.fwhm
    lorentz = 1.0 / (1.0 + 4.0 * u * u)
    gauss = np.exp(-FOUR_LN2 * u * u)
    return band.height * (band.eta * lorentz + (1.0 - band.eta) * gauss)


def band_sum(x: np.ndarray, bands: tuple[BandShape, ...]) -> np.ndarray:
    """Absorbance of a set of bands on the grid ``x`` (no baseline, no noise)."""
    y = np.zeros_like(x, dtype=np.float64)
    for band in bands:
        y += pseudo_voigt(x, band)
    return y


@dataclass(frozen=True, kw_only=True)
class Acquisition:
    """How one simulated measurement differs from the ideal band list."""

    scale: float = 1.0            # overall intensity (contact pressure, path length)
    position_jitter: float = 0.3  # sd of per-band position shifts, cm⁻¹
    height_jitter: float = 0.03   # relative sd of per-band heights
    offset: float = 0.01          # baseline offset, absorbance
    slope: float = 0.01           # baseline rise from high to low wavenumber, absorbance
    curvature: float = 0.004      # baseline bow, absorbance
    noise_sd: float = 0.0015      # white noise, absorbance
    stray_light: float | None = None  # fraction of stray light: saturates strong bands (too-thick sample)


def perturb(bands: tuple[BandShape, ...], acq: Acquisition, rng: np.random.Generator) -> tuple[BandShape, ...]:
    """The bands as one measurement sees them: small seeded shifts of position and height."""
    out = []
    for band in bands:
        dx = rng.normal(0.0, acq.position_jitter)
        dh = 1.0 + rng.normal(0.0, acq.height_jitter)
        out.append(replace(band, position=band.position + dx, height=band.height * dh * acq.scale))
    return tuple(out)


def measure(x: np.ndarray, bands: tuple[BandShape, ...], acq: Acquisition, rng: np.random.Generator) -> np.ndarray:
    """One simulated absorbance spectrum on the grid ``x``.

    Bands are perturbed, summed, put on a smooth baseline (offset + slope + bow, rising towards low
    wavenumber as scattering does) and given white noise. With ``stray_light`` set, the detector sees
    ``T + s`` instead of ``T``, so strong bands flatten near ``-log10(s)``: the look of a sample that
    is too thick (Beer-Lambert with stray light; common practice).
    """
    y = band_sum(x, perturb(bands, acq, rng))
    t = (x.max() - x) / (x.max() - x.min())  # 0 at high wavenumber, 1 at low
    y = y + acq.offset + acq.slope * t + acq.curvature * 4.0 * t * (1.0 - t)
    if acq.stray_light is not None:
        transmittance = 10.0 ** (-y)
        noisy_t = transmittance + acq.stray_light + rng.normal(0.0, acq.noise_sd * 0.5, size=x.size)
        return -np.log10(np.clip(noisy_t, 1e-6, None))
    return y + rng.normal(0.0, acq.noise_sd, size=x.size)


def grid(*, high: float = 4000.0, low: float = 650.0, step: float = 2.0) -> np.ndarray:
    """An ascending wavenumber grid from ``low`` to ``high`` (both included) with the given step."""
    n = int(round((high - low) / step)) + 1
    return np.round(np.linspace(low, high, n), 6)
