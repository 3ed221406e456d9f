"""Preprocessing steps: crop, resample, normalisation, ATR correction, masks, recorded pipelines."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

from service.errors import InvalidInput
from service.spectra import (
    Step,
    atr_correct,
    crop,
    mask_regions,
    normalise_minmax,
    normalise_snv,
    normalise_vector,
    penetration_depth_um,
    resample,
    run_steps,
    uniform_grid,
)


def _frozen(a):
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a


# Source: Harrick, Internal Reflection Spectroscopy (1967), dp = λ/(2π n1 √(sin²θ − (n2/n1)²));
# check values from ../shared/domain.md: ZnSe (n1 2.4), n2 1.5, 45°, 1000 cm⁻¹ -> ~2.0 µm; Ge (n1 4.0) -> 0.66 µm.
@pytest.mark.parametrize(("n_crystal", "expected_um"), [(2.4, 2.0), (4.0, 0.66)])
def test_penetration_depth_harrick(n_crystal, expected_um) -> None:
    assert penetration_depth_um(1000.0, n_crystal=n_crystal, n_sample=1.5, angle_deg=45.0) == pytest.approx(
        expected_um, abs=0.01
    )


def test_penetration_depth_scales_with_wavelength_and_refuses_no_total_reflection() -> None:
    dp = penetration_depth_um(np.array([1000.0, 2000.0]), n_crystal=2.4)
    assert dp[0] == pytest.approx(2 * dp[1])
    with pytest.raises(InvalidInput, match="total internal reflection"):
        penetration_depth_um(1000.0, n_crystal=1.6, n_sample=1.5, angle_deg=45.0)


def test_atr_correction_scales_by_wavenumber_over_reference() -> None:
    x = _frozen([500.0, 1000.0, 2000.0, 4000.0])
    y = _frozen([1.0, 1.0, 1.0, 1.0])
    assert_allclose(atr_correct(x, y, reference_cm1=1000.0), [0.5, 1.0, 2.0, 4.0])
    # corrected ATR band ratios then follow 1/dp (Harrick): a flat "true" spectrum measured by ATR
    dp = penetration_depth_um(x, n_crystal=2.4)
    measured = _frozen(dp / dp[1])
    assert_allclose(atr_correct(x, measured, reference_cm1=1000.0), 1.0)


def test_crop_and_resample() -> None:
    x = _frozen(np.arange(400.0, 4000.0, 1.0))
    y = _frozen(np.sin(x / 100))
    cx, cy = crop(x, y, lo=1000.0, hi=1010.0)
    assert_allclose(cx, np.arange(1000.0, 1011.0))
    assert_allclose(cy, np.sin(cx / 100))
    grid = uniform_grid(500.0, 600.0, 0.5)
    assert grid.size == 201 and grid[-1] == 600.0
    got = resample(x, y, grid)
    # oracle: linear interpolation written out
    for g, v in zip(grid, got):
        i = int(np.searchsorted(x, g, "right")) - 1
        i = min(i, x.size - 2)
        t = (g - x[i]) / (x[i + 1] - x[i])
        assert v == pytest.approx(y[i] * (1 - t) + y[i + 1] * t, abs=1e-12)


def test_resample_never_extrapolates_and_crop_needs_points() -> None:
    x = _frozen(np.arange(400.0, 4000.0, 1.0))
    with pytest.raises(InvalidInput, match="covers only"):
        resample(x, x, uniform_grid(300.0, 600.0, 1.0))
    with pytest.raises(InvalidInput, match="leaves 0 points"):
        crop(x, x, lo=5000.0, hi=6000.0)


def test_normalisations() -> None:
    y = _frozen([1.0, 2.0, 3.0, 6.0])
    assert np.linalg.norm(normalise_vector(y)) == pytest.approx(1.0)
    snv = normalise_snv(y)
    assert snv.mean() == pytest.approx(0.0, abs=1e-12) and snv.std(ddof=1) == pytest.approx(1.0)
    assert_allclose(normalise_minmax(y), [0.0, 0.2, 0.4, 1.0])
    for fn in (normalise_vector, normalise_snv, normalise_minmax):
        with pytest.raises(InvalidInput):
            fn(np.zeros(5))


def test_mask_regions() -> None:
    x = _frozen(np.arange(2000.0, 2500.0, 10.0))
    use = mask_regions(x, exclude=[(2280, 2400)])
    assert not use[(x >= 2280) & (x <= 2400)].any() and use[x < 2280].all()
    inc = mask_regions(x, include=[(2000, 2100), (2400, 2450)], exclude=[(2050, 2060)])
    assert_allclose(x[inc], [2000, 2010, 2020, 2030, 2040, 2070, 2080, 2090, 2100, 2400, 2410, 2420, 2430, 2440, 2450])
    with pytest.raises(InvalidInput):
        mask_regions(x, exclude=[(2400, 2280)])


def test_pipeline_records_every_parameter_and_leaves_inputs_alone() -> None:
    x = _frozen(np.arange(400.0, 4000.0, 0.5))
    y = _frozen(np.exp(-((x - 1700) / 10) ** 2) + 1e-4 * x)
    steps = [
        Step("crop", {"lo": 600, "hi": 3800}),
        Step("resample", {"lo": 600, "hi": 3800, "spacing": 1.0}),
        Step("baseline_asls", {"lam": 1e5, "p": 0.01}),
        Step("smooth", {"window": 9, "polyorder": 2}),
        Step("normalise_snv"),
    ]
    out = run_steps(x, y, steps)
    assert out.x[0] == 600.0 and out.x[-1] == 3800.0 and out.x.size == 3201
    assert [s.name for s in out.steps] == [s.name for s in steps]
    assert out.steps[2].params == {"lam": 1e5, "p": 0.01, "max_iter": 50, "tol": 1e-3, "diff_order": 2}
    assert out.steps[3].params == {"window": 9, "polyorder": 2, "deriv": 0}
    assert out.diagnostics[0]["method"] == "asymmetric least squares"
    assert out.y.mean() == pytest.approx(0.0, abs=1e-9)
    # the record re-makes the result
    again = run_steps(x, y, out.steps)
    assert_allclose(again.y, out.y)


def test_pipeline_refuses_unknown_step_and_uneven_spacing() -> None:
    x = _frozen(np.arange(400.0, 500.0, 1.0))
    with pytest.raises(InvalidInput, match="unknown preprocessing step"):
        run_steps(x, x, [Step("sharpen")])
    with pytest.raises(InvalidInput, match="missing or wrong parameter"):
        run_steps(x, x, [Step("crop", {"lo": 410})])
    xu = _frozen(np.concatenate([np.arange(400.0, 450.0, 1.0), np.arange(450.0, 500.0, 2.0)]))
    with pytest.raises(InvalidInput, match="evenly spaced"):
        run_steps(xu, xu, [Step("smooth")])
