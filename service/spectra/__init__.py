"""PURE spectral core: Spectrum model, readers and writers, conversion, quality, preprocessing,
band measurement, similarity and instrument checks. Imports nothing from the web or the database."""

from service.spectra.bands import Band, BandClasses, find_bands, parabolic_offset
from service.spectra.baseline import BaselineResult, baseline_arpls, baseline_asls, baseline_rubberband
from service.spectra.model import Spectrum, SpectrumError, SpectrumMeta, YKind
from service.spectra.pipeline import Processed, run_steps
from service.spectra.polystyrene import (
    PH_EUR_BANDS,
    PH_EUR_RESOLUTION,
    CheckItem,
    InstrumentCheck,
    PolystyreneCheckError,
    check_polystyrene,
)
from service.spectra.preprocess import (
    Step,
    atr_correct,
    crop,
    mask_regions,
    normalise_minmax,
    normalise_snv,
    normalise_vector,
    penetration_depth_um,
    resample,
    uniform_grid,
)
from service.spectra.quality import (
    QualityFinding,
    QualityLimits,
    QualityReport,
    assess_quality,
    coverage_findings,
)
from service.spectra.similarity import cosine, euclidean_distance, first_derivative_correlation, pearson
from service.spectra.smoothing import SavitzkyGolay

__all__ = [
    "Band", "BandClasses", "BaselineResult", "CheckItem", "InstrumentCheck", "PH_EUR_BANDS", "PH_EUR_RESOLUTION",
    "PolystyreneCheckError", "Processed", "QualityFinding", "QualityLimits", "QualityReport", "SavitzkyGolay",
    "Spectrum", "SpectrumError", "SpectrumMeta", "Step", "YKind", "assess_quality", "atr_correct",
    "baseline_arpls", "baseline_asls", "baseline_rubberband", "check_polystyrene", "cosine", "coverage_findings",
    "crop", "euclidean_distance", "find_bands", "first_derivative_correlation", "mask_regions",
    "normalise_minmax", "normalise_snv", "normalise_vector", "parabolic_offset", "pearson",
    "penetration_depth_um", "resample", "run_steps", "uniform_grid",
]
