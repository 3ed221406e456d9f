"""evaluate(): verdicts, criteria and evidence on seeded synthetic spectra (labelled synthetic)."""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import numpy as np
import pytest
from evaluation_factories import ESTER_BANDS, synthetic

from service.evaluation import Evaluation, ReferenceLibrary, evaluate, parse_specification
from service.spectra import Spectrum, YKind

MakeSpectrum = Callable[..., Spectrum]


def spec(**changes: Any):  # type: ignore[no-untyped-def]
    d: dict[str, Any] = {"material": "SYN-ESTER", "name": "synthetic ester", "version": 1,
                         "preparation": "atr-znse", "range": [3800, 650],
                         "fingerprint": {"metric": "pearson", "min_score": 0.95}}
    d.update(changes)
    return parse_specification(d)


ESTER_CO = {"label": "C=O ester", "from": 1750, "to": 1735, "min_relative_intensity": 0.3}


def test_ester_passes_a_spec_requiring_the_ester_carbonyl() -> None:
    # Group-frequency table (UCLA WebSpectra / UMass OWL, ../shared/domain.md): ester C=O 1750–1735 cm⁻¹, strong.
    sample, reference = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS, seed=2)
    e = evaluate(sample, spec(required_bands=[ESTER_CO]), reference)
    assert e.verdict == "pass", e.summary()
    band = next(c for c in e.criteria if c.kind == "required_band")
    assert band.details["band"]["position_cm1"] == pytest.approx(1742.0, abs=0.3)
    assert band.details["band"]["strength"] == "strong" and band.details["band"]["shape"] == "sharp"


def test_the_same_ester_fails_a_spec_forbidding_1760_1690() -> None:
    # Group-frequency table (../shared/domain.md): C=O acid 1760–1690 — the ester band falls inside it.
    sample = synthetic(ESTER_BANDS, seed=1)
    reference = synthetic([b for b in ESTER_BANDS if b[0] != 1742.0], seed=3)
    s = spec(forbidden_bands=[{"label": "carbonyl", "from": 1760, "to": 1690, "max_relative_intensity": 0.05}],
             fingerprint={"metric": "pearson", "min_score": 0.5})
    e = evaluate(sample, s, reference)
    assert e.verdict == "fail"
    bad = e.failed_criteria[0]
    assert bad.kind == "forbidden_band" and bad.measured > 0.9  # the strongest band of the spectrum
    assert bad.details["band"]["position_cm1"] == pytest.approx(1742.0, abs=0.3)


def test_broad_oh_is_classed_broad_and_nitrile_sharp() -> None:
    # Group-frequency table (../shared/domain.md): O–H H-bonded 3550–3200 s b; C≡N 2260–2210 m sharp.
    bands = [(3350.0, 0.6, 250.0), (2230.0, 0.3, 10.0), (2950.0, 0.3, 20.0), (1050.0, 0.8, 25.0)]
    s = spec(required_bands=[{"label": "O-H", "from": 3550, "to": 3200, "min_width": 100},
                             {"label": "C#N", "from": 2260, "to": 2210, "max_width": 30}])
    e = evaluate(synthetic(bands, seed=1), s, synthetic(bands, seed=2))
    oh, cn = (c for c in e.criteria if c.kind == "required_band")
    assert oh.details["band"]["shape"] == "broad" and oh.details["band"]["width_cm1"] > 150
    assert cn.details["band"]["shape"] == "sharp" and cn.details["band"]["width_cm1"] < 20
    assert e.verdict == "pass", e.summary()


def test_band_position_with_tolerance() -> None:
    # Ph. Eur. 2.2.24 polystyrene band 1601.2 ± 1.0 cm⁻¹ used as a rule shape (../shared/domain.md).
    s = spec(required_bands=[{"label": "ring", "from": 1610, "to": 1590, "position": 1601.2, "tolerance": 1.0}],
             fingerprint={"metric": "pearson", "min_score": 0.5})
    ok = evaluate(synthetic([(1601.0, 0.5, 8.0), (2900.0, 0.4, 30.0)]), s, synthetic([(1601.0, 0.5, 8.0)]))
    assert next(c for c in ok.criteria if c.kind == "required_band").passed
    shifted = evaluate(synthetic([(1604.0, 0.5, 8.0), (2900.0, 0.4, 30.0)]), s, synthetic([(1601.0, 0.5, 8.0)]))
    crit = next(c for c in shifted.criteria if c.kind == "required_band")
    assert not crit.passed and "position offset" in crit.message
    assert shifted.verdict == "fail"


def test_saturated_weak_noisy_and_short_samples_are_invalid_not_failed() -> None:
    reference = synthetic(ESTER_BANDS)
    s = spec()
    saturated = synthetic([(b[0], b[1] * 2.5, b[2]) for b in ESTER_BANDS])
    weak = synthetic([(b[0], b[1] * 0.05, b[2]) for b in ESTER_BANDS])
    noisy = synthetic(ESTER_BANDS, noise=0.05)
    short = synthetic(ESTER_BANDS, lo=1000.0)
    for sample, code in ((saturated, "saturated"), (weak, "too-weak"), (noisy, "too-noisy"), (short, "wrong-range")):
        e = evaluate(sample, s, reference)
        assert e.verdict == "invalid", (code, e.summary())
        assert code in [n.code for n in e.invalid_reasons]


def test_wrong_preparation_is_invalid() -> None:
    e = evaluate(synthetic(ESTER_BANDS), spec(), synthetic(ESTER_BANDS), reference_preparation="kbr-disc")
    assert e.verdict == "invalid" and e.invalid_reasons[0].code == "wrong-preparation"
    assert "kbr-disc" in e.invalid_reasons[0].message


def test_transmittance_input_is_converted_and_judged_the_same() -> None:
    a = synthetic(ESTER_BANDS, seed=4)
    t = Spectrum.create(a.x, 10.0 ** (-a.y), YKind.transmittance)
    ref = synthetic(ESTER_BANDS, seed=5)
    ea, et = evaluate(a, spec(), ref), evaluate(t, spec(), ref)
    assert ea.verdict == et.verdict == "pass"
    fa = next(c for c in ea.criteria if c.kind == "fingerprint")
    ft = next(c for c in et.criteria if c.kind == "fingerprint")
    assert ft.measured == pytest.approx(fa.measured, abs=1e-9)


def test_warnings_band_near_edge_and_score_near_limit() -> None:
    s = spec(required_bands=[{"label": "C=O", "from": 1743, "to": 1700}],
             fingerprint={"metric": "pearson", "min_score": 0.95})
    sample = synthetic(ESTER_BANDS, seed=1)
    e = evaluate(sample, s, synthetic(ESTER_BANDS, seed=2))
    assert "band-near-window-edge" in [w.code for w in e.warnings]
    own = next(c for c in e.criteria if c.kind == "fingerprint").measured
    s2 = spec(fingerprint={"metric": "pearson", "min_score": round(own - 0.002, 4)})
    e2 = evaluate(sample, s2, synthetic(ESTER_BANDS, seed=2))
    assert "score-near-limit" in [w.code for w in e2.warnings] and e2.verdict == "pass"


def test_reference_that_breaks_its_own_spec_is_flagged() -> None:
    s = spec(required_bands=[{"label": "C#N", "from": 2260, "to": 2210}], fingerprint={"metric": "pearson",
                                                                                       "min_score": 0.5})
    e = evaluate(synthetic(ESTER_BANDS + [(2230.0, 0.3, 10.0)]), s, synthetic(ESTER_BANDS))
    assert "reference-disagrees" in [w.code for w in e.warnings]


def test_specificity_names_the_other_material() -> None:
    # ICH Q2(R2) specificity: a near neighbour must be told apart; here the sample *is* the other material.
    ester = synthetic(ESTER_BANDS, seed=1)
    other_bands = [(2960.0, 0.35, 18.0), (1715.0, 0.9, 16.0), (1360.0, 0.4, 12.0), (1220.0, 0.5, 20.0)]
    ketone = synthetic(other_bands, seed=2)
    lib = ReferenceLibrary.build([("SYN-ESTER", ester), ("SYN-KETONE", ketone)])
    s = spec(fingerprint={"metric": "pearson", "min_score": 0.1})
    sample = synthetic(other_bands, seed=3)
    e = evaluate(sample, s, ester, lib)
    crit = next(c for c in e.criteria if c.kind == "specificity")
    assert e.verdict == "fail" and not crit.passed
    assert crit.details["closest_other_material"] == "SYN-KETONE" and "SYN-KETONE" in crit.message
    assert e.matches is not None and e.matches[0].material == "SYN-KETONE"
    right = evaluate(synthetic(ESTER_BANDS, seed=4), s, ester, lib)
    assert right.verdict == "pass" and next(c for c in right.criteria if c.kind == "specificity").passed


def test_the_record_is_json_safe_and_complete() -> None:
    s = spec(required_bands=[ESTER_CO], exclude=[[2000, 1900]])
    e = evaluate(synthetic(ESTER_BANDS, seed=1), s, synthetic(ESTER_BANDS, seed=2),
                 ReferenceLibrary.build([("SYN-ESTER", synthetic(ESTER_BANDS))]))
    d = e.as_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d
    assert d["verdict"] == "pass" and d["schema"] == "bandgate.evaluation/1"
    for c in d["criteria"]:
        assert set(c) >= {"kind", "label", "outcome", "measured", "limit", "details"}
        assert c["kind"] in {"quality", "required_band", "forbidden_band", "fingerprint", "specificity"}
    assert d["software"]["name"] == "bandgate" and d["software"]["version"]
    assert len(d["sample"]["sha256_data"]) == 64 and len(d["reference"]["sha256_data"]) == 64
    assert d["specification"]["document"] == s.as_document()
    reasons = {r["reason"] for r in d["excluded_regions"]}
    assert "atmospheric CO₂ (asymmetric stretch)" in reasons and "excluded by the specification" in reasons
    assert d["preprocessing"]["baseline"]["lam"] > 0 and d["preprocessing"]["resampling"]["step_cm1"] == 1.0
    assert "not a release" in d["caution"]
    assert isinstance(e, Evaluation) and d["matches"][0]["material"] == "SYN-ESTER"


def test_inputs_are_not_mutated() -> None:
    sample, ref = synthetic(ESTER_BANDS, seed=1), synthetic(ESTER_BANDS, seed=2)
    before = sample.y.copy(), ref.y.copy()
    evaluate(sample, spec(required_bands=[ESTER_CO]), ref)
    assert np.array_equal(sample.y, before[0]) and np.array_equal(ref.y, before[1])
    assert not sample.y.flags.writeable


def test_preparation_exclusions_are_shown_and_masked(make_spectrum: MakeSpectrum) -> None:
    s = spec(preparation="mineral-oil-mull", range=[3800, 650])
    mull = [(2920.0, 1.2, 40.0), (1460.0, 0.3, 10.0), (1377.0, 0.2, 6.0)]
    sample = make_spectrum(ESTER_BANDS[2:] + mull, seed=1)  # oil bands only in the sample
    e = evaluate(sample, s, make_spectrum(ESTER_BANDS[2:], seed=2))
    shown = [r for r in e.as_dict()["excluded_regions"] if r["source"] == "preparation"]
    assert {r["from"] for r in shown} == {2950, 1465, 1380, 730}
    fp = next(c for c in e.criteria if c.kind == "fingerprint")
    assert fp.passed, fp.message  # the oil bands are masked out of the comparison


def test_strong_water_vapour_lines_are_warned_about() -> None:
    # Water-vapour lines ~3950–3500 cm⁻¹ (../shared/domain.md, interference regions; common practice).
    clean = synthetic(ESTER_BANDS, seed=1)
    x = clean.x
    lines = sum(0.04 * np.exp(-0.5 * ((x - c) / 0.8) ** 2) for c in np.arange(3660.0, 3940.0, 7.3))
    wet = clean.with_values(clean.y + lines)
    s = spec()
    assert "water-vapour" not in [w.code for w in evaluate(clean, s, synthetic(ESTER_BANDS)).warnings]
    e = evaluate(wet, s, synthetic(ESTER_BANDS))
    assert "water-vapour" in [w.code for w in e.warnings] and e.verdict == "pass"


def test_a_saturated_reference_is_warned_about() -> None:
    strong = synthetic([(c, h * 2.0, w) for c, h, w in ESTER_BANDS], seed=2)
    e = evaluate(synthetic(ESTER_BANDS, seed=1), spec(), strong)
    assert "reference-saturated" in [w.code for w in e.warnings]


def test_the_cached_reference_check_follows_the_specification_it_was_made_for() -> None:
    # Two specifications alike but for the saturation limit: the reference (strongest band ~1.8) is
    # saturated under the first only. The prepared reference is cached; its self-check must not be.
    strong = synthetic([(c, h * 2.0, w) for c, h, w in ESTER_BANDS], seed=2)
    sample = synthetic(ESTER_BANDS, seed=1)
    strict = evaluate(sample, spec(), strong)
    lenient = evaluate(sample, spec(quality={"max_absorbance": 2.5, "min_absorbance": 0.1}), strong)
    assert "reference-saturated" in [w.code for w in strict.warnings]
    assert "reference-saturated" not in [w.code for w in lenient.warnings]
