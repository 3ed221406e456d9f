"""The spectra-io bench compares like with like: the jcamp package (PyPI 1.3.2, the reference
reader) decodes the generated DIFDUP file to the same values as ours. Times are not asserted here
(figures come from `bandgate bench`)."""

from __future__ import annotations

import numpy as np

from service.bench import BenchCase, BenchResult
from service.bench import spectra_io


def test_bench_file_is_decoded_alike_by_both_readers() -> None:
    data = spectra_io._reference_setup()  # raises if the two readers disagree
    assert b"##XYDATA=(X++(Y..Y))" in data
    s = spectra_io._read(data)
    assert s.n_points == spectra_io.N_POINTS
    assert np.all(np.diff(s.x) == np.diff(s.x)[0]) or np.allclose(np.diff(s.x), 1.0)


def test_cases_and_derived_ratio() -> None:
    names = [c.name for c in spectra_io.cases()]
    assert spectra_io.OURS in names and spectra_io.REFERENCE in names
    fake = {spectra_io.OURS: BenchResult(spectra_io.OURS, 2.0, 1.0, 3.0, 5),
            spectra_io.REFERENCE: BenchResult(spectra_io.REFERENCE, 30.0, 25.0, 35.0, 5)}
    (row,) = spectra_io.derived(fake)
    assert row["ratio"] == 15.0
    assert all(isinstance(c, BenchCase) or hasattr(c, "figures") for c in spectra_io.cases())
