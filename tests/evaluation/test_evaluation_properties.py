"""Properties of the verdict that must hold for any spectrum (hypothesis, bounded)."""

from __future__ import annotations

from typing import Any

from evaluation_factories import synthetic
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.evaluation import evaluate, parse_specification

SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])

band = st.tuples(st.floats(700.0, 3700.0), st.floats(0.05, 0.9), st.floats(4.0, 120.0))
bands = st.lists(band, min_size=1, max_size=8)


def _spec(**changes: Any):  # type: ignore[no-untyped-def]
    d: dict[str, Any] = {"material": "PROP", "name": "property test material (synthetic)", "version": 1,
                         "preparation": "atr-znse", "range": [3800, 650],
                         "fingerprint": {"metric": "pearson", "min_score": 0.95},
                         "quality": {"max_absorbance": 1.5, "min_absorbance": 0.1}}
    d.update(changes)
    return parse_specification(d)


def _usable(e) -> bool:  # type: ignore[no-untyped-def]
    return e.verdict != "invalid"


@SETTINGS
@given(bands=bands, seed=st.integers(0, 10_000), metric=st.sampled_from(["pearson", "first-derivative", "euclidean"]))
def test_a_spectrum_that_meets_the_quality_limits_passes_against_itself(bands: list, seed: int, metric: str) -> None:
    s = synthetic(bands, seed=seed)
    fp = {"metric": metric, "max_distance": 0.05} if metric == "euclidean" else {"metric": metric, "min_score": 0.999}
    e = evaluate(s, _spec(fingerprint=fp), s)
    if _usable(e):
        assert e.verdict == "pass", e.summary()


@SETTINGS
@given(bands=bands, seed=st.integers(0, 10_000), factor=st.floats(0.3, 3.0))
def test_scaling_the_sample_within_the_quality_limits_never_changes_the_verdict(bands: list, seed: int,
                                                                                factor: float) -> None:
    reference = synthetic(bands, seed=seed + 1)
    sample = synthetic(bands, seed=seed)
    scaled = sample.with_values(sample.y * factor)
    spec = _spec(required_bands=[{"label": "any band", "from": 1800, "to": 1000}],
                 fingerprint={"metric": "first-derivative", "min_score": 0.9})
    a, b = evaluate(sample, spec, reference), evaluate(scaled, spec, reference)
    if _usable(a) and _usable(b):
        assert a.verdict == b.verdict, (a.summary(), b.summary())


@SETTINGS
@given(bands=bands, seed=st.integers(0, 10_000), centre=st.floats(1700.0, 1750.0), width=st.floats(6.0, 30.0))
def test_a_strong_band_inside_a_forbidden_window_always_fails(bands: list, seed: int, centre: float,
                                                              width: float) -> None:
    clean = [b for b in bands if not 1600.0 < b[0] < 1850.0]
    top = max((h for _, h, _ in clean), default=0.3)
    sample = synthetic(clean + [(centre, max(top, 0.3), width)], seed=seed)
    spec = _spec(forbidden_bands=[{"label": "carbonyl", "from": 1760, "to": 1690, "max_relative_intensity": 0.05}],
                 fingerprint={"metric": "pearson", "min_score": 0.5})
    e = evaluate(sample, spec, synthetic(clean or bands, seed=seed + 1))
    if _usable(e):
        assert e.verdict == "fail"
        assert any(c.kind == "forbidden_band" and not c.passed for c in e.criteria)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(values=st.lists(st.floats(-0.5, 6.0), min_size=16, max_size=64), lo=st.floats(400.0, 1500.0),
       kind=st.sampled_from(["absorbance", "transmittance", "percent_transmittance"]))
def test_any_spectrum_gets_a_verdict_never_a_crash(values: list, lo: float, kind: str) -> None:
    """Odd data (flat, negative, spiky, short, zero transmittance) yields a verdict, not an exception."""
    import numpy as np

    from service.spectra import Spectrum

    y = np.interp(np.linspace(0, 1, 800), np.linspace(0, 1, len(values)), values)
    if kind != "absorbance":
        y = np.clip(y / 6.0, 0.0, 1.0) * (100.0 if kind == "percent_transmittance" else 1.0)
    x = np.linspace(lo, 4000.0, y.size)
    sample = Spectrum.create(x, y, kind)
    spec = _spec(required_bands=[{"label": "any", "from": 1800, "to": 1600}],
                 forbidden_bands=[{"label": "none", "from": 1200, "to": 1100, "max_relative_intensity": 0.5}])
    e = evaluate(sample, spec, synthetic([(1700.0, 0.5, 20.0)]))
    assert e.verdict in {"pass", "fail", "invalid"}
    if lo > 652.0:
        assert e.verdict == "invalid" and "wrong-range" in [n.code for n in e.invalid_reasons]
    assert isinstance(e.as_dict()["criteria"], list)
