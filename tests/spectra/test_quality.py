"""Quality findings on synthetic spectra with one defect each (limits: common practice, domain.md),
and on real public-domain JCAMP-DX spectra."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from service.errors import InvalidInput
from service.spectra import QualityLimits, Spectrum, assess_quality, coverage_findings, read_spectrum, to_absorbance

X = np.arange(400.0, 4000.0, 1.0)


def _gauss(centre, fwhm, height):
    return height * np.exp(-4 * np.log(2) * ((X - centre) / fwhm) ** 2)


def _clean(noise=0.0005, seed=0):
    y = (_gauss(2925, 30, 0.6) + _gauss(1715, 20, 0.9) + _gauss(1450, 15, 0.3) + _gauss(1100, 25, 0.5)
         + _gauss(750, 12, 0.4) + 0.02)
    return y + np.random.default_rng(seed).normal(0, noise, X.size)


def _outcomes(y, **limits):
    report = assess_quality(Spectrum.create(X, y, "absorbance"), limits=QualityLimits(**limits))
    return {f.name: f.outcome for f in report.findings}, report


def test_clean_spectrum_passes_every_finding() -> None:
    outcomes, report = _outcomes(_clean())
    assert set(outcomes.values()) == {"pass"}, report.as_dict()
    assert report.outcome == "pass" and report.usable
    names = {"saturation", "flat-topped band", "too weak", "noise", "negative bands", "water vapour", "CO₂",
             "sloping baseline"}
    assert names == set(outcomes)
    for f in report.findings:
        assert f.measured is not None and f.limit is not None and f.message


def test_saturated_band_fails() -> None:
    outcomes, report = _outcomes(_clean() + _gauss(1715, 20, 1.5))
    assert outcomes["saturation"] == "fail"
    assert report.finding("saturation").measured == pytest.approx(2.42, abs=0.02)
    assert report.outcome == "fail"


def test_clipped_band_is_flat_topped() -> None:
    y = np.minimum(_clean(noise=0.0), 0.6) + np.random.default_rng(1).normal(0, 0.0005, X.size)
    outcomes, report = _outcomes(y)
    assert outcomes["flat-topped band"] == "fail", report.finding("flat-topped band")


def test_weak_spectrum_fails() -> None:
    outcomes, _ = _outcomes(_clean(noise=0.00005) * 0.05)
    assert outcomes["too weak"] == "fail"


def test_noisy_spectrum_fails() -> None:
    outcomes, report = _outcomes(_clean(noise=0.02))
    assert outcomes["noise"] == "fail"
    assert report.finding("noise").measured == pytest.approx(0.02, rel=0.25)


def test_negative_band_warns() -> None:
    outcomes, report = _outcomes(_clean() - _gauss(1050, 15, 0.15))
    assert outcomes["negative bands"] == "warn"
    assert "1050" in report.finding("negative bands").message or "104" in report.finding("negative bands").message


def test_water_vapour_lines_warn() -> None:
    rng = np.random.default_rng(5)
    lines = sum(_gauss(c, 2.5, h) for c, h in zip(rng.uniform(3660, 3940, 40), rng.uniform(0.01, 0.05, 40)))
    outcomes, _ = _outcomes(_clean() + lines)
    assert outcomes["water vapour"] == "warn"


def test_co2_band_warns() -> None:
    outcomes, _ = _outcomes(_clean() + _gauss(2360, 15, 0.08) + _gauss(2340, 15, 0.07))
    assert outcomes["CO₂"] == "warn"


def test_sloping_baseline_warns() -> None:
    outcomes, _ = _outcomes(_clean() + 0.4 * ((X - 400) / 3600) ** 2)
    assert outcomes["sloping baseline"] == "warn"


def test_range_and_spacing_against_what_a_specification_needs() -> None:
    s = Spectrum.create(X[::4], _clean()[::4], "absorbance")
    found = {f.name: f for f in coverage_findings(s, needed_range=(650, 4000), max_spacing_cm1=2.0)}
    assert found["range"].outcome == "fail" and found["range"].measured == pytest.approx(4.0)
    assert found["point spacing"].outcome == "fail" and found["point spacing"].measured == pytest.approx(4.0)
    found = {f.name: f for f in coverage_findings(s, needed_range=(600, 3900), max_spacing_cm1=4.0)}
    assert {f.outcome for f in found.values()} == {"pass"}
    outcomes, _ = _outcomes(_clean(), needed_range_cm1=(600, 3900), max_spacing_cm1=1.0)
    assert outcomes["range"] == "pass" and outcomes["point spacing"] == "pass"


def test_noise_region_not_covered_is_a_warning() -> None:
    sel = X < 1900
    report = assess_quality(Spectrum.create(X[sel], _clean()[sel], "absorbance"))
    assert report.finding("noise").outcome == "warn" and report.finding("noise").measured is None


def test_only_absorbance_is_accepted() -> None:
    with pytest.raises(InvalidInput, match="absorbance"):
        assess_quality(Spectrum.create(X, 10 ** -_clean(), "transmittance"))


JCAMP = Path(__file__).resolve().parents[1] / "data" / "jcamp"


def _real(name: str) -> Spectrum:
    return to_absorbance(read_spectrum((JCAMP / name).read_bytes(), file_name=name))


def test_real_indene_spectrum_clipped_at_absorbance_3_is_saturated_and_flat_topped() -> None:
    """fixinc2.jdx (public domain, jcamp 1.3.2 sdist, see tests/data/jcamp/README.md): indene in
    absorbance whose strongest bands are cut off at A = 3 by the instrument software."""
    report = assess_quality(_real("fixinc2.jdx"))
    assert report.finding("saturation").outcome == "fail"
    assert report.finding("saturation").measured == pytest.approx(3.0, abs=0.01)
    assert report.finding("flat-topped band").outcome == "fail"


def test_real_thin_polystyrene_film_is_a_usable_spectrum() -> None:
    """jtpolys.jdx (public domain): a thin polystyrene film, nothing saturated, S/N well above 100."""
    report = assess_quality(_real("jtpolys.jdx"))
    assert report.outcome == "pass", [f for f in report.findings if f.outcome != "pass"]
