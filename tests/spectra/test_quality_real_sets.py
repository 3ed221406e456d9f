"""Quality findings on openly licensed real ATR spectra read in place from ../shared/data.

Sources (see ../shared/data/README.md):
- real-atr-five-materials.csv: GPL-3, R package PlotFTIR (Natural Resources Canada), data/sample_spectra.rda.
- real-atr-plant-paper-materials.csv: Hodgkins et al. (2018), CC BY 4.0, as shipped in the R package `ir`
  (inst/extdata/klh_hodgkins_mir.csv). Attribution: Hodgkins, S. B. et al., Nature Communications 9 (2018) 3640.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
import pytest

from service.spectra import Spectrum, assess_quality


def _columns(path: Path) -> dict[str, Spectrum]:
    with path.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    head = rows[0]
    data = np.array([[float(v) if v else np.nan for v in r] for r in rows[1:]])
    out = {}
    for j, name in enumerate(head[1:], start=1):
        ok = np.isfinite(data[:, j])
        out[name] = Spectrum.create(data[ok, 0], data[ok, j], "absorbance")
    return out


def test_five_materials_saturated_toluene_and_clean_polystyrene(shared_data) -> None:
    spectra = _columns(shared_data / "real-atr-five-materials.csv")
    toluene = assess_quality(spectra["toluene"])
    assert toluene.finding("saturation").outcome == "fail"
    assert toluene.finding("saturation").measured >= 4.9  # the export clips at A = 5
    polystyrene = assess_quality(spectra["polystyrene"])
    assert polystyrene.outcome == "pass", [f for f in polystyrene.findings if f.outcome != "pass"]
    heptanes = assess_quality(spectra["heptanes"])
    assert heptanes.outcome == "pass", [f for f in heptanes.findings if f.outcome != "pass"]


def test_crowded_fingerprint_regions_are_not_taken_for_negative_bands(shared_data) -> None:
    """Real ATR spectra of leaves, wood and paper (Hodgkins et al. 2018): weak (A < 0.1), with
    crowded fingerprint regions whose valleys a narrow running baseline mistook for negative bands."""
    spectra = _columns(shared_data / "real-atr-plant-paper-materials.csv")
    assert len(spectra) == 58
    findings = {name: assess_quality(s).finding("negative bands") for name, s in spectra.items()}
    flagged = {name: f.measured for name, f in findings.items() if f.outcome != "pass"}
    assert not flagged, flagged
