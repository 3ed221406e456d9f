"""PURE spectral core: Spectrum model, readers and writers, conversion, quality, preprocessing,
band measurement, similarity and instrument checks. Imports nothing from the web or the database."""

from service.spectra.model import Spectrum, SpectrumError, SpectrumMeta, YKind

__all__ = ["Spectrum", "SpectrumError", "SpectrumMeta", "YKind"]
