"""PURE spectral core: Spectrum model, readers and writers, conversion, quality, preprocessing,
band measurement, similarity and instrument checks. Imports nothing from the web or the database."""

from service.spectra.axis_units import XUnit
from service.spectra.conversion import to_absorbance, to_percent_transmittance, to_transmittance
from service.spectra.delimited import read_delimited
from service.spectra.jcamp_reader import JcampBlock, Peak, PeakTable, read_jcamp_blocks
from service.spectra.jcamp_writer import write_jcamp
from service.spectra.model import Spectrum, SpectrumError, SpectrumMeta, YKind
from service.spectra.reader_errors import ACCEPTED_FORMATS, ReaderError
from service.spectra.readers import decode_text, detect_format, read_jcamp_file, read_peak_table, read_spectrum

__all__ = [
    "ACCEPTED_FORMATS",
    "JcampBlock",
    "Peak",
    "PeakTable",
    "ReaderError",
    "Spectrum",
    "SpectrumError",
    "SpectrumMeta",
    "XUnit",
    "YKind",
    "decode_text",
    "detect_format",
    "read_delimited",
    "read_jcamp_blocks",
    "read_jcamp_file",
    "read_peak_table",
    "read_spectrum",
    "to_absorbance",
    "to_percent_transmittance",
    "to_transmittance",
    "write_jcamp",
]
