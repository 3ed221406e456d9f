"""The specification document: validation names every wrong field with its path and the fix."""

from __future__ import annotations

import copy
import json
from typing import Any

import pytest

from service.errors import InvalidInput
from service.evaluation import PREPARATIONS, SpecificationError, parse_specification

EXAMPLE: dict[str, Any] = {
    "material": "EXC-104",
    "name": "Microcrystalline cellulose",
    "version": 3,
    "preparation": "atr-diamond",
    "range": [4000, 650],
    "exclude": [[2400, 2280]],
    "required_bands": [
        {"label": "O-H stretch, hydrogen-bonded", "from": 3550, "to": 3200, "min_relative_intensity": 0.10,
         "min_width": 100}
    ],
    "forbidden_bands": [
        {"label": "carbonyl (oxidation or wrong material)", "from": 1760, "to": 1690, "max_relative_intensity": 0.05}
    ],
    "fingerprint": {"metric": "pearson", "regions": [[1500, 650]], "min_score": 0.95},
    "quality": {"max_absorbance": 1.5, "min_absorbance": 0.1},
}


def doc(**changes: Any) -> dict[str, Any]:
    d = copy.deepcopy(EXAMPLE)
    d.update(changes)
    return d


def problems(d: Any) -> dict[str, str]:
    with pytest.raises(SpecificationError) as info:
        parse_specification(d)
    assert isinstance(info.value, InvalidInput)
    return {p.path: p.message for p in info.value.fields}


def test_the_documented_example_parses_and_round_trips() -> None:
    spec = parse_specification(EXAMPLE)
    assert spec.material == "EXC-104" and spec.version == 3
    assert spec.window == (650.0, 4000.0)
    assert spec.required_bands[0].window == (3200.0, 3550.0)
    assert spec.fingerprint is not None and spec.fingerprint.min_score == 0.95
    again = parse_specification(json.loads(json.dumps(spec.as_document())))
    assert again == spec
    assert again.digest() == spec.digest()
    for key in ("material", "name", "version", "preparation", "range", "exclude", "required_bands",
                "forbidden_bands", "fingerprint", "quality"):
        assert spec.as_document()[key] == EXAMPLE[key]


def test_from_and_to_in_either_order() -> None:
    d = doc()
    d["required_bands"][0].update({"from": 3200, "to": 3550})
    assert parse_specification(d).required_bands[0].window == (3200.0, 3550.0)


def test_a_band_expected_at_a_position_with_tolerance_is_valid() -> None:
    d = doc(required_bands=[{"label": "aromatic ring", "from": 1610, "to": 1595, "position": 1601.2, "tolerance": 1.0}],
            forbidden_bands=[])
    rule = parse_specification(d).required_bands[0]
    assert rule.position == 1601.2 and rule.tolerance == 1.0


def test_every_wrong_field_is_named_with_its_path_and_fix() -> None:
    d = doc()
    d["required_bands"] = [
        EXAMPLE["required_bands"][0],
        {"label": "C-O", "from": 1100, "to": 1000},
        {"label": "bad", "from": 9000, "to": 1000},
    ]
    d["fingerprint"] = {"metric": "cosine", "min_score": 0.95}
    d["quality"] = {"max_absorbance": -1}
    d["colour"] = "blue"
    found = problems(d)
    assert found["required_bands[2].from"] == "must be a wavenumber in cm⁻¹ between 400 and 7800 (got 9000)"
    assert "pearson, first-derivative, euclidean" in found["fingerprint.metric"]
    assert "quality.max_absorbance" in found
    assert found["colour"].startswith("unknown key")
    assert len(found) == 4


def test_missing_required_fields_are_each_named() -> None:
    found = problems({"required_bands": []})
    for key in ("material", "name", "version", "preparation", "range"):
        assert found[key] == "is required"


def test_windows_outside_the_range_are_errors() -> None:
    d = doc(range=[3000, 650], exclude=[])
    found = problems(d)
    assert "outside the evaluated range 3000–650" in found["required_bands[0]"]


def test_overlapping_required_and_forbidden_windows_are_errors() -> None:
    d = doc(forbidden_bands=[{"label": "x", "from": 3300, "to": 3100, "max_relative_intensity": 0.05}])
    assert "overlaps required_bands[0]" in problems(d)["forbidden_bands[0]"]


def test_unknown_keys_inside_rules_are_errors() -> None:
    d = doc()
    d["required_bands"][0]["min_intensity"] = 0.1
    d["fingerprint"]["threshold"] = 0.9
    found = problems(d)
    assert found["required_bands[0].min_intensity"].startswith("unknown key")
    assert found["fingerprint.threshold"].startswith("unknown key")


@pytest.mark.parametrize("code", ["atr-diamond", "atr-znse", "atr-ge", "kbr-disc", "mineral-oil-mull", "film",
                                  "solution", "neat-liquid"])
def test_the_documented_preparations_exist(code: str) -> None:
    assert code in PREPARATIONS


def test_a_solution_needs_a_named_solvent() -> None:
    assert "solvent" in problems(doc(preparation="solution"))["preparation.solvent"]
    d = doc(preparation={"method": "solution", "solvent": "chloroform"}, range=[4000, 900], exclude=[],
            fingerprint={"metric": "pearson", "min_score": 0.95})
    spec = parse_specification(d)
    assert spec.solvent == "chloroform"
    assert any(r.source == "solvent" and r.lo == 1200.0 for r in spec.excluded_regions())
    assert parse_specification(spec.as_document()) == spec


def test_germanium_atr_range_limit() -> None:
    assert "usable down to 800" in problems(doc(preparation="atr-ge"))["range"]


def test_a_window_inside_an_excluded_region_cannot_be_measured() -> None:
    d = doc(preparation="mineral-oil-mull",
            required_bands=[{"label": "C-H", "from": 2940, "to": 2860}], forbidden_bands=[])
    assert "mineral oil" in problems(d)["required_bands[0]"]


def test_euclidean_needs_max_distance_and_correlations_min_score() -> None:
    found = problems(doc(fingerprint={"metric": "euclidean", "min_score": 0.9}))
    assert "max_distance" in found["fingerprint.min_score"] and "fingerprint.max_distance" in found
    spec = parse_specification(doc(fingerprint={"metric": "euclidean", "max_distance": 0.3}))
    assert spec.fingerprint is not None and spec.fingerprint.limit == 0.3


def test_a_specification_must_judge_something() -> None:
    d = doc(required_bands=[])
    del d["fingerprint"]
    assert "fingerprint" in problems(d)


@pytest.mark.parametrize("bad", [None, [], "spec", 3])
def test_non_objects_are_refused(bad: Any) -> None:
    assert problems(bad) == {"": "the specification must be a JSON object"}


def test_booleans_are_not_numbers() -> None:
    d = doc()
    d["required_bands"][0]["min_width"] = True
    assert "required_bands[0].min_width" in problems(d)


def test_the_error_message_lists_the_problems_on_one_line() -> None:
    with pytest.raises(SpecificationError) as info:
        parse_specification(doc(version=0))
    assert "\n" not in str(info.value) and "version: must be a whole number" in str(info.value)
