"""Property tests (hypothesis, bounded) for the numerical routines: invariants that must hold for any input."""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from numpy.testing import assert_allclose

from service.errors import InvalidInput
from service.spectra import (
    SavitzkyGolay,
    Spectrum,
    assess_quality,
    baseline_rubberband,
    find_bands,
    pearson,
)

SETTINGS = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
values = arrays(np.float64, st.integers(30, 300), elements=st.floats(-5, 5, allow_nan=False, width=32))


@SETTINGS
@given(values, st.sampled_from([(5, 2), (7, 3), (9, 2), (11, 4)]))
def test_savitzky_golay_preserves_polynomials_and_is_linear(y, wp) -> None:
    window, polyorder = wp
    sg = SavitzkyGolay(window=window, polyorder=polyorder)
    t = np.linspace(-1, 1, y.size)
    poly = np.polynomial.polynomial.polyval(t, np.arange(1, polyorder + 2, dtype=float))
    assert_allclose(sg.apply(poly), poly, atol=1e-9)  # a polynomial of degree <= polyorder is unchanged
    assert_allclose(sg.apply(2 * y + poly), 2 * sg.apply(y) + sg.apply(poly), atol=1e-9)


@SETTINGS
@given(values)
def test_rubberband_is_below_the_data_and_convex(y) -> None:
    x = np.arange(y.size, dtype=float)
    res = baseline_rubberband(x, y)
    assert (res.corrected >= -1e-9).all()
    assert (np.diff(res.baseline, 2) >= -1e-9).all()
    assert res.corrected[0] == 0.0 and res.corrected[-1] == 0.0


@SETTINGS
@given(values, st.floats(0.1, 10), st.floats(-10, 10))
def test_pearson_is_bounded_symmetric_and_affine_invariant(y, scale, offset) -> None:
    other = np.roll(y, 3) + 0.1 * np.arange(y.size)
    r = pearson(y, other) if np.ptp(y) > 1e-6 else None
    if r is None:
        return
    assert -1.0 <= r <= 1.0
    assert abs(r - pearson(other, y)) < 1e-12
    assert abs(r - pearson(scale * y + offset, other)) < 1e-6


@SETTINGS
@given(values, st.floats(1e-3, 2.0))
def test_find_bands_on_any_data(y, prominence) -> None:
    x = np.linspace(400, 4000, y.size)
    bands = find_bands(x, y, min_prominence=prominence)
    for b in bands:
        assert 400 <= b.position_cm1 <= 4000
        assert b.height > 0 and b.fwhm_cm1 >= 0 and 0 < b.relative_intensity <= 1.0 + 1e-12
    positions = [b.position_cm1 for b in bands]
    assert positions == sorted(positions)


@settings(max_examples=15, deadline=None)
@given(arrays(np.float64, st.integers(16, 600), elements=st.floats(-1, 4, allow_nan=False, width=32)),
       st.floats(0.5, 8.0))
def test_assess_quality_never_raises_on_any_absorbance_spectrum(y, spacing) -> None:
    x = 400.0 + spacing * np.arange(y.size)
    try:
        report = assess_quality(Spectrum.create(x, y, "absorbance"))
    except InvalidInput:
        return
    assert report.outcome in ("pass", "warn", "fail")
    for f in report.findings:
        assert f.measured is None or np.isfinite(f.measured)


@SETTINGS
@given(st.one_of(st.lists(st.integers(0, 60), min_size=16, max_size=80),
                 st.lists(st.integers(0, 3000), min_size=16, max_size=80, unique=True)),
       st.sampled_from(["as given", "ascending", "descending"]),
       st.sampled_from([None, "nan in x", "inf in y"]))
def test_spectrum_create_sorts_like_a_stable_argsort_and_names_the_first_bad_point(xs, order, flaw) -> None:
    """Oracle: ``np.argsort(kind="stable")`` and the refusals' own wording, for any order of the axis."""
    import pytest

    from service.spectra import SpectrumError

    x = np.array(sorted(xs) if order == "ascending" else sorted(xs, reverse=True) if order == "descending" else xs,
                 dtype=float) + 400.0
    y = np.arange(x.size, dtype=float)
    if flaw == "nan in x":
        x[3] = np.nan
    elif flaw == "inf in y":
        y[5] = np.inf
    if flaw is not None:
        with pytest.raises(SpectrumError, match=rf"^1 non-finite value\(s\), first at point {4 if flaw == 'nan in x' else 6} "):
            Spectrum.create(x, y, "absorbance")
        return
    oracle = np.argsort(x, kind="stable")
    repeated = np.flatnonzero(np.diff(x[oracle]) <= 0)
    if repeated.size:
        with pytest.raises(SpectrumError, match=rf"repeats the value {x[oracle][repeated[0]]:g} cm"):
            Spectrum.create(x, y, "absorbance")
        return
    s = Spectrum.create(x, y, "absorbance")
    assert s.x.tobytes() == x[oracle].tobytes() and s.y.tobytes() == y[oracle].tobytes()
