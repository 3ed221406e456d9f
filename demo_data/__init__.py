"""Synthetic demo data for Bandgate: an invented plant, invented suppliers, generated spectra.

Nothing here was measured. `demo_data.generate` writes the specification documents, reference and
sample spectra (JCAMP-DX and CSV) and the scenario manifest that `bandgate demo` seeds from.
"""
