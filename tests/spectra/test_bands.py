"""Band measurement on synthetic bands placed by the group-frequency tables."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from service.errors import InvalidInput
from service.spectra import find_bands, parabolic_offset

X = np.arange(400.0, 4000.0, 1.0)
X.setflags(write=False)


def _gauss(centre, fwhm, height, x=X):
    return height * np.exp(-4 * np.log(2) * ((x - centre) / fwhm) ** 2)


def _spectrum():
    # Group frequencies (../shared/domain.md; UCLA WebSpectra / UMass OWL tables):
    # O–H H-bonded 3550–3200 strong, broad; C≡N 2260–2210 medium, sharp; ketone C=O ~1715 strong.
    y = _gauss(3350.0, 300.0, 0.8) + _gauss(2230.0, 10.0, 0.4) + _gauss(1715.3, 20.0, 1.0) + _gauss(1100.0, 25, 0.1)
    y = y + 0.02 + 1e-5 * (X - 400)  # a gently sloping baseline
    y.setflags(write=False)
    return y


def test_hydrogen_bonded_oh_is_broad_and_nitrile_is_sharp() -> None:
    bands = {round(b.position_cm1): b for b in find_bands(X, _spectrum(), min_prominence=0.02)}
    assert set(bands) == {1100, 1715, 2230, 3350}
    assert bands[3350].shape == "broad" and bands[3350].strength == "strong"
    assert bands[2230].shape == "sharp" and bands[2230].strength == "medium"
    assert bands[1715].strength == "strong" and bands[1715].relative_intensity == pytest.approx(1.0)
    assert bands[1100].strength == "weak"
    assert all(b.position_method == "parabolic" for b in bands.values())


def test_height_above_local_baseline_fwhm_and_sub_point_position() -> None:
    bands = {round(b.position_cm1): b for b in find_bands(X, _spectrum(), min_prominence=0.02)}
    c = bands[1715]
    assert c.position_cm1 == pytest.approx(1715.3, abs=0.05)  # between grid points
    assert c.height == pytest.approx(1.0, abs=0.01)  # the sloping baseline is not counted
    assert c.fwhm_cm1 == pytest.approx(20.0, abs=0.3)
    assert bands[2230].fwhm_cm1 == pytest.approx(10.0, abs=0.3)
    assert bands[2230].relative_intensity == pytest.approx(0.4, abs=0.01)


def test_window_and_reference_height() -> None:
    bands = find_bands(X, _spectrum(), window=(2000, 2500), min_prominence=0.02)
    assert len(bands) == 1 and bands[0].relative_intensity == pytest.approx(1.0)
    bands = find_bands(X, _spectrum(), window=(2000, 2500), min_prominence=0.02, reference_height=0.8)
    assert bands[0].relative_intensity == pytest.approx(0.5, abs=0.01)
    assert find_bands(X, _spectrum(), window=(2500, 2600), min_prominence=0.02) == []


def test_parabolic_offset_is_exact_for_a_parabola() -> None:
    # domain.md: δ = ½(y₋₁ − y₊₁)/(y₋₁ − 2y₀ + y₊₁); for y = −(t − 0.3)² the vertex is at +0.3
    f = lambda t: -((t - 0.3) ** 2)  # noqa: E731
    assert parabolic_offset(f(-1), f(0), f(1)) == pytest.approx(0.3)
    x = np.arange(0.0, 20.0, 2.0)
    y = 5 - (x - 10.6) ** 2
    (band,) = find_bands(x, y, min_prominence=0.1)
    assert band.position_cm1 == pytest.approx(10.6)


def test_inputs_not_modified_and_bad_parameters() -> None:
    y = _spectrum()
    find_bands(X, y, min_prominence=0.02)
    with pytest.raises(InvalidInput):
        find_bands(X, y, min_prominence=0)
    with pytest.raises(InvalidInput):
        find_bands(X, y[:10])
    with pytest.raises(InvalidInput):
        find_bands(X, y, window=(3000, 2000))


def test_centroid_position_of_a_symmetric_band() -> None:
    y = _gauss(1715.3, 20.0, 1.0)
    (band,) = find_bands(X, y, min_prominence=0.1, position_method="centroid")
    assert band.position_method == "centroid"
    assert band.position_cm1 == pytest.approx(1715.3, abs=0.05)
    with pytest.raises(InvalidInput):
        find_bands(X, y, position_method="peak")


def _positions_oracle(x, y, peaks):  # type: ignore[no-untyped-def]
    """Each maximum on its own: the parabola's vertex offset (parabolic_offset) times the spacing on its side."""
    out = []
    for i in peaks.tolist():
        if 0 < i < x.size - 1:
            d = parabolic_offset(float(y[i - 1]), float(y[i]), float(y[i + 1]))
            out.append(float(x[i]) + d * float(x[i + 1] - x[i] if d >= 0 else x[i] - x[i - 1]))
        else:
            out.append(float(x[i]))
    return np.array(out)


@pytest.mark.parametrize("seed", range(6))
def test_vectorised_positions_match_one_parabola_at_a_time(seed) -> None:
    from service.spectra.bands import _positions

    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.uniform(0.5, 2.0, 300)) + 400.0
    y = np.round(rng.normal(size=300), 1 if seed % 2 else 6)  # rounding makes flat tops (zero denominators)
    peaks = np.unique(np.r_[0, 299, rng.integers(0, 300, 40)]) if seed < 3 else np.unique(rng.integers(1, 299, 40))
    assert_allclose(_positions(x, y, peaks), _positions_oracle(x, y, peaks), rtol=0, atol=0)
    for n in (1, 2, 5, 16):  # few maxima take the one-by-one loop; it must give the same bits
        few = peaks[:n]
        assert np.array(_positions(x, y, few)).tobytes() == _positions_oracle(x, y, few).tobytes()
