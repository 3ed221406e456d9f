"""Spectra files for record tests.

* Real ATR spectra of toluene, heptanes and isopropanol from ``../shared/data/real-atr-five-materials.csv``
  (GPL-3; R package PlotFTIR, Natural Resources Canada, ``data/sample_spectra.rda``, commit 8831c26),
  written out as two-column CSV uploads. Read from the shared folder at test time, not copied.
* A SYNTHETIC polystyrene film spectrum (Lorentzian bands placed at the Ph. Eur. 2.2.24 check
  positions, values from memory) to give instruments a passing check; labelled synthetic.
"""

from __future__ import annotations

import csv
from functools import lru_cache
from pathlib import Path

import numpy as np

SHARED = Path(__file__).resolve().parents[1].parent / "shared" / "data" / "real-atr-five-materials.csv"

TOLUENE_SPEC = {
    "material": "TOL-01", "name": "Toluene", "version": 1, "preparation": "atr-diamond", "range": [3200, 800],
    "fingerprint": {"metric": "pearson", "min_score": 0.95},
    "required_bands": [{"label": "aromatic ring stretch", "from": 1510, "to": 1480}],
}


@lru_cache(maxsize=1)
def _five() -> tuple[np.ndarray, dict[str, np.ndarray]]:
    rows = list(csv.reader(SHARED.open(encoding="utf-8")))
    data = np.array(rows[1:], dtype=float)
    return data[:, 0], {name: data[:, i] for i, name in enumerate(rows[0]) if i}


def available() -> bool:
    return SHARED.is_file()


def _csv(x: np.ndarray, y: np.ndarray, title: str) -> bytes:
    lines = [f"wavenumber,absorbance"] + [f"{a:.4f},{b:.6f}" for a, b in zip(x, y)]
    return ("\n".join(lines) + "\n").encode("ascii")


def real_csv(name: str, *, noise: float = 0.0, seed: int = 0) -> bytes:
    """One real spectrum as an uploaded CSV file, optionally with seeded noise added (a repeat scan)."""
    x, cols = _five()
    y = cols[name]
    if noise:
        y = y + np.random.default_rng(seed).normal(0.0, noise, y.size)
    return _csv(x, y, name)


def synthetic_polystyrene_csv() -> bytes:
    """SYNTHETIC polystyrene film (absorbance): Lorentzians at the Ph. Eur. 2.2.24 positions, 0.5 cm⁻¹ spacing."""
    x = np.arange(600.0, 3400.0, 0.5)
    bands = [(3082, 0.25, 4), (3060.0, 0.45, 4), (3026, 0.6, 4), (2924, 0.9, 8), (2849.5, 0.55, 4),
             (1942.9, 0.12, 6), (1871, 0.1, 6), (1801, 0.08, 6), (1601.2, 0.35, 3), (1583.0, 0.2, 2.5),
             (1493, 0.9, 4), (1452, 0.85, 5), (1154.5, 0.15, 3), (1028.3, 0.3, 3), (906, 0.3, 4), (757, 1.0, 5),
             (698, 1.2, 5)]
    y = np.full_like(x, 0.02)
    for pos, height, hw in bands:
        y += height / (1.0 + ((x - pos) / hw) ** 2)
    return _csv(x, y, "synthetic polystyrene film")


def synthetic_polystyrene_jcamp(*, time_lines: tuple[str, ...] = (), shift_cm1: float = 0.0) -> bytes:
    """The SYNTHETIC polystyrene film as JCAMP-DX, with header lines such as ``##LONGDATE=...`` after the title.

    ``shift_cm1`` moves the wavenumber scale (a film measured on a drifted scale fails the check).
    """
    from service.spectra import YKind, read_spectrum, write_jcamp
    from service.spectra.model import Spectrum, SpectrumMeta

    film = read_spectrum(synthetic_polystyrene_csv(), file_name="ps.csv")
    film = Spectrum.create(film.x + shift_cm1, film.y, YKind.absorbance,
                           meta=SpectrumMeta(title="SYNTHETIC polystyrene film"))
    lines = write_jcamp(film, form="affn").splitlines()
    return ("\n".join(lines[:1] + list(time_lines) + lines[1:]) + "\n").encode("ascii")
