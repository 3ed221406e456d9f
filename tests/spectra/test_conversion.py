"""Transmittance, percent transmittance and absorbance.

Check values: A = -log10(T) = 2 - log10(%T); T = 50 % -> 0.30103, 10 % -> 1, 1 % -> 2
(../shared/domain.md, "Absorbance"; the definition in the IUPAC Gold Book).
"""

from __future__ import annotations

import numpy as np
import pytest

from service.spectra import (
    Spectrum,
    SpectrumError,
    YKind,
    to_absorbance,
    to_percent_transmittance,
    to_transmittance,
)

X = np.linspace(400.0, 4000.0, 32)


def spectrum(values: list[float] | np.ndarray, kind: YKind) -> Spectrum:
    y = np.resize(np.asarray(values, dtype=float), X.size)
    return Spectrum.create(X, y, kind)


@pytest.mark.parametrize(("percent", "absorbance"), [(50.0, 0.30103), (10.0, 1.0), (1.0, 2.0)])
def test_absorbance_check_values_from_domain_notes(percent: float, absorbance: float) -> None:
    """domain.md: T = 50 % -> A = 0.30103; 10 % -> 1; 1 % -> 2."""
    a = to_absorbance(spectrum([percent], YKind.percent_transmittance))
    assert a.kind is YKind.absorbance
    np.testing.assert_allclose(a.y, absorbance, atol=5e-6)
    f = to_absorbance(spectrum([percent / 100], YKind.transmittance))
    np.testing.assert_allclose(f.y, absorbance, atol=5e-6)


def test_round_trips_between_the_three_kinds() -> None:
    a = spectrum(np.linspace(0.0, 3.0, 32), YKind.absorbance)
    t = to_transmittance(a)
    p = to_percent_transmittance(t)
    np.testing.assert_allclose(p.y, 100 * t.y)
    np.testing.assert_allclose(to_absorbance(p).y, a.y, atol=1e-12)
    np.testing.assert_allclose(to_absorbance(t).y, a.y, atol=1e-12)
    assert "converted from absorbance to transmittance" in t.notes[-1]


def test_non_positive_transmittance_is_clipped_and_flagged_not_silently() -> None:
    t = spectrum([0.5, 0.0, -0.002, 0.1], YKind.transmittance)
    a = to_absorbance(t)
    assert np.isfinite(a.y).all()
    assert a.y.max() == pytest.approx(6.0)
    note = a.notes[-1]
    assert "16 point(s) with transmittance at or below zero" in note and "clipped" in note


def test_transmittance_above_one_gives_negative_absorbance_as_it_is() -> None:
    a = to_absorbance(spectrum([101.0], YKind.percent_transmittance))
    np.testing.assert_allclose(a.y, -np.log10(1.01))
    assert "clipped" not in a.notes[-1]


def test_the_input_is_not_changed_and_same_kind_is_returned_as_is() -> None:
    t = spectrum([0.5], YKind.transmittance)
    before = t.y.copy()
    to_absorbance(t)
    np.testing.assert_array_equal(t.y, before)
    assert to_transmittance(t) is t


@pytest.mark.parametrize("kind", [YKind.reflectance, YKind.kubelka_munk])
def test_reflectance_kinds_are_not_converted_by_a_unit_change(kind: YKind) -> None:
    with pytest.raises(SpectrumError, match="cannot be converted"):
        to_absorbance(spectrum([0.5], kind))
