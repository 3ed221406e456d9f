"""PURE spectral core: Spectrum model, readers and writers, conversion, quality, preprocessing,
band measurement, similarity and instrument checks. Imports nothing from the web or the database."""

from service.spectra.axis_units import XUnit
from service.spectra.bands import Band, BandClasses, find_bands, parabolic_offset
from service.spectra.baseline import (
    BaselineResult,
    asls_second_difference,
    baseline_arpls,
    baseline_asls,
    baseline_rubberband,
)
from service.spectra.conversion import to_absorbance, to_percent_transmittance, to_transmittance
from service.spectra.delimited import read_delimited
from service.spectra.jcamp_reader import JcampBlock, Peak, PeakTable, read_jcamp_blocks
from service.spectra.jcamp_writer import write_jcamp
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
from service.spectra.reader_errors import ACCEPTED_FORMATS, CompoundFileError, ReaderError
from service.spectra.readers import decode_text, detect_format, read_jcamp_file, read_peak_table, read_spectrum
from service.spectra.similarity import cosine, euclidean_distance, first_derivative_correlation, pearson
from service.spectra.smoothing import SavitzkyGolay

__all__ = [
    "ACCEPTED_FORMATS",
    "Band",
    "BandClasses",
    "BaselineResult",
    "CheckItem",
    "CompoundFileError",
    "InstrumentCheck",
    "JcampBlock",
    "PH_EUR_BANDS",
    "PH_EUR_RESOLUTION",
    "Peak",
    "PeakTable",
    "PolystyreneCheckError",
    "Processed",
    "QualityFinding",
    "QualityLimits",
    "QualityReport",
    "ReaderError",
    "SavitzkyGolay",
    "Spectrum",
    "SpectrumError",
    "SpectrumMeta",
    "Step",
    "XUnit",
    "YKind",
    "asls_second_difference",
    "assess_quality",
    "atr_correct",
    "baseline_arpls",
    "baseline_asls",
    "baseline_rubberband",
    "check_polystyrene",
    "cosine",
    "coverage_findings",
    "crop",
    "decode_text",
    "detect_format",
    "euclidean_distance",
    "find_bands",
    "first_derivative_correlation",
    "mask_regions",
    "normalise_minmax",
    "normalise_snv",
    "normalise_vector",
    "parabolic_offset",
    "pearson",
    "penetration_depth_um",
    "read_delimited",
    "read_jcamp_blocks",
    "read_jcamp_file",
    "read_peak_table",
    "read_spectrum",
    "resample",
    "run_steps",
    "to_absorbance",
    "to_percent_transmittance",
    "to_transmittance",
    "uniform_grid",
    "write_jcamp",
]
