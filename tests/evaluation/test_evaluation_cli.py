"""`bandgate evaluate` and `bandgate suggest-bands`: exit codes, JSON record, one-line errors."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from evaluation_factories import ESTER_BANDS, synthetic

from service.cli import main
from service.spectra import Spectrum, write_jcamp

KETONE = [(2960.0, 0.35, 18.0), (1715.0, 0.9, 16.0), (1360.0, 0.4, 12.0), (1220.0, 0.5, 20.0)]
SPEC: dict[str, Any] = {
    "material": "SYN-ESTER", "name": "synthetic ester", "version": 2, "preparation": "atr-znse",
    "range": [3800, 650],
    "required_bands": [{"label": "C=O ester", "from": 1750, "to": 1735, "min_relative_intensity": 0.3}],
    "fingerprint": {"metric": "pearson", "min_score": 0.95},
}


def _write(path: Path, s: Spectrum) -> str:
    path.write_text(write_jcamp(s, form="difdup"), encoding="ascii")
    return str(path)


@pytest.fixture
def files(tmp_path: Path) -> dict[str, str]:
    lib = tmp_path / "library"
    lib.mkdir()
    _write(lib / "SYN-ESTER.jdx", synthetic(ESTER_BANDS, seed=10))
    _write(lib / "SYN-KETONE.jdx", synthetic(KETONE, seed=11))
    (lib / "notes.md").write_text("not a spectrum; ignored by suffix")
    spec = tmp_path / "spec.json"
    spec.write_text(json.dumps(SPEC))
    return {
        "spec": str(spec), "library": str(lib),
        "reference": _write(tmp_path / "ref.jdx", synthetic(ESTER_BANDS, seed=1)),
        "good": _write(tmp_path / "good.jdx", synthetic(ESTER_BANDS, seed=2)),
        "ketone": _write(tmp_path / "ketone.jdx", synthetic(KETONE, seed=3)),
        "weak": _write(tmp_path / "weak.jdx", synthetic([(c, h * 0.05, w) for c, h, w in ESTER_BANDS], seed=4)),
    }


def test_pass_prints_a_readable_result_and_exits_0(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["evaluate", files["good"], "--spec", files["spec"], "--reference", files["reference"]])
    out = capsys.readouterr().out
    assert code == 0 and out.startswith("PASS  SYN-ESTER v2") and "not a release" in out


def test_json_output_is_the_evaluation_record(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["evaluate", files["ketone"], "--spec", files["spec"], "--reference", files["reference"],
                 "--library", files["library"], "--json"])
    record = json.loads(capsys.readouterr().out)
    assert code == 1 and record["verdict"] == "fail"
    spec_crit = next(c for c in record["criteria"] if c["kind"] == "specificity")
    assert spec_crit["outcome"] == "fail" and spec_crit["details"]["closest_other_material"] == "SYN-KETONE"
    assert record["matches"][0]["material"] == "SYN-KETONE" and len(record["matches"]) == 2
    assert record["sample"]["file_name"] == "ketone.jdx" and len(record["sample"]["sha256_file"]) == 64


def test_invalid_measurement_exits_3(files: dict[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["evaluate", files["weak"], "--spec", files["spec"], "--reference", files["reference"]])
    assert code == 3 and "cannot be judged" in capsys.readouterr().out


@pytest.mark.parametrize("case", ["missing-sample", "bad-json", "bad-spec", "garbage-sample", "no-library"])
def test_unusable_input_or_spec_is_one_line_and_exit_2(files: dict[str, str], tmp_path: Path,
                                                       capsys: pytest.CaptureFixture[str], case: str) -> None:
    args = {"sample": files["good"], "spec": files["spec"], "library": None}
    if case == "missing-sample":
        args["sample"] = str(tmp_path / "nope.jdx")
    elif case == "bad-json":
        (tmp_path / "broken.json").write_text("{ not json")
        args["spec"] = str(tmp_path / "broken.json")
    elif case == "bad-spec":
        (tmp_path / "wrong.json").write_text(json.dumps(dict(SPEC, range=[9000, 650])))
        args["spec"] = str(tmp_path / "wrong.json")
    elif case == "garbage-sample":
        (tmp_path / "image.png").write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(range(256)))
        args["sample"] = str(tmp_path / "image.png")
    else:
        args["library"] = str(tmp_path / "missing-folder")
    argv = ["evaluate", args["sample"], "--spec", args["spec"], "--reference", files["reference"]]
    if args["library"]:
        argv += ["--library", args["library"]]
    code = main(argv)
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("bandgate: ") and err.count("\n") == 1 and "Traceback" not in err
    if case == "bad-spec":
        assert "range[0]: must be a wavenumber" in err


def test_suggest_bands_lists_bands_with_group_frequency_hints(files: dict[str, str],
                                                              capsys: pytest.CaptureFixture[str]) -> None:
    # Group-frequency table (UCLA WebSpectra / UMass OWL, ../shared/domain.md): ester C=O 1750–1735.
    assert main(["suggest-bands", files["reference"], "--preparation", "atr-znse"]) == 0
    out = capsys.readouterr().out
    assert "C=O ester" in out and "not identifications" in out
    assert main(["suggest-bands", files["reference"], "--preparation", "atr-znse", "--json"]) == 0
    bands = json.loads(capsys.readouterr().out)["bands"]
    top = bands[0]
    assert top["position_cm1"] == pytest.approx(1742.0, abs=0.5) and top["relative_intensity"] == 1.0
    assert any("C=O ester" in a for a in top["assignments"])
    assert top["rule"]["from"] > 1742 > top["rule"]["to"]
