"""Plain factories for the evaluation tests: seeded synthetic spectra and readers for ../shared/data."""

from __future__ import annotations

import csv
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from service.spectra.model import Spectrum, SpectrumMeta

Band = tuple[float, float, float]  # centre cm⁻¹, height (absorbance), FWHM cm⁻¹

# Group-frequency positions (UCLA WebSpectra / UMass OWL IR tables, as quoted in ../shared/domain.md).
ESTER_BANDS: list[Band] = [(2960.0, 0.35, 18.0), (2875.0, 0.2, 14.0), (1742.0, 0.9, 16.0), (1460.0, 0.2, 10.0),
                           (1375.0, 0.15, 8.0), (1240.0, 0.7, 20.0), (1050.0, 0.45, 18.0)]


def synthetic(bands: Sequence[Band], *, lo: float = 600.0, hi: float = 4000.0, step: float = 1.0,
              baseline: float = 0.02, slope: float = 0.0, noise: float = 0.0005, seed: int = 0,
              title: str = "synthetic") -> Spectrum:
    """A synthetic absorbance spectrum of Gaussian bands (labelled synthetic in its metadata)."""
    x = np.arange(lo, hi + step / 2, step)
    y = baseline + slope * (x - lo) / (hi - lo) + np.zeros_like(x)
    for centre, height, fwhm in bands:
        y = y + height * np.exp(-4 * np.log(2) * ((x - centre) / fwhm) ** 2)
    y = y + np.random.default_rng(seed).normal(0.0, noise, x.size)
    return Spectrum.create(x, y, "absorbance", meta=SpectrumMeta(title=f"{title} (synthetic)", origin="synthetic"))



def read_wide_csv(path: Path) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """A wide CSV of ../shared/data: first column wavenumber, one absorbance column per spectrum."""
    with path.open(newline="") as fh:
        header = next(csv.reader(fh))
    data = np.loadtxt(path, delimiter=",", skiprows=1)
    return data[:, 0], {name: data[:, i + 1] for i, name in enumerate(header[1:])}


def real_spectra(shared: Path, file_name: str) -> dict[str, Spectrum]:
    x, cols = read_wide_csv(shared / file_name)
    return {name: Spectrum.create(x, y, "absorbance", meta=SpectrumMeta(title=name, file_name=file_name))
            for name, y in cols.items()}

