"""The committed demo files through the command line: `bandgate inspect`, `bandgate evaluate` and
`bandgate check-polystyrene` give the verdicts each scenario was built for."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from service.cli import main

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data"
MANIFEST = json.loads((DEMO / "scenario.json").read_text(encoding="utf-8"))
EXIT = {"pass": 0, "fail": 1, "invalid": 3}

CASES = [
    pytest.param(lot["material"], m["file"], m["expect"], id=Path(m["file"]).stem)
    for lot in MANIFEST["lots"] for m in lot["measurements"]
] + [
    pytest.param("SOL-204", "samples/SOL-204_lot-PEL-GLY-1187_c1_remeasured.jdx", "pass", id="glycerol-remeasured"),
    pytest.param("EXC-101", "bench/EXC-101_3600-points.jdx", "pass", id="bench-3600-points"),
] + [
    pytest.param(m["code"], m["reference"], "pass", id=f"reference-{m['code']}") for m in MANIFEST["materials"]
]


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def _evaluate(capsys: pytest.CaptureFixture[str], material: str, file: str) -> tuple[int, dict[str, Any]]:
    code, out, err = _run(capsys, "evaluate", str(DEMO / file), "--spec", str(DEMO / "specs" / f"{material}.json"),
                          "--reference", str(DEMO / "library" / f"{material}.jdx"),
                          "--library", str(DEMO / "library"), "--json")
    assert out, err
    return code, json.loads(out)


@pytest.mark.parametrize(("material", "file", "expect"), CASES)
def test_evaluate_gives_the_verdict_the_scenario_intends(capsys: pytest.CaptureFixture[str], material: str,
                                                         file: str, expect: str) -> None:
    code, result = _evaluate(capsys, material, file)
    assert (result["verdict"], code) == (expect, EXIT[expect]), [
        (c["kind"], c["label"], c["measured"], c["limit"]) for c in result["criteria"] if c["outcome"] == "fail"]


def test_the_mix_up_is_named(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = _evaluate(capsys, "SOL-201", "samples/SOL-201_lot-BRF-2611-IP_c2_holds-ethanol.jdx")
    spec = next(c for c in result["criteria"] if c["kind"] == "specificity")
    assert spec["outcome"] == "fail" and spec["details"]["closest_other_material"] == "SOL-202"
    assert result["matches"][0]["material"] == "SOL-202"


def test_the_wet_and_contaminated_lots_fail_only_their_forbidden_band(capsys: pytest.CaptureFixture[str]) -> None:
    for material, file in (("SOL-203", "samples/SOL-203_lot-KES-EA-0931_c1_wet.jdx"),
                           ("EXC-103", "samples/EXC-103_lot-PEL-MGS-5520_c1_carbonyl.jdx")):
        _code, result = _evaluate(capsys, material, file)
        assert {c["kind"] for c in result["criteria"] if c["outcome"] == "fail"} == {"forbidden_band"}, file


@pytest.mark.parametrize("path", sorted(p.relative_to(DEMO).as_posix() for p in DEMO.glob("*/*.jdx")))
def test_inspect_reads_every_jcamp_file_and_its_csv_twin_alike(capsys: pytest.CaptureFixture[str], path: str) -> None:
    code, out, err = _run(capsys, "inspect", str(DEMO / path), "--json")
    assert code == 0, err
    jdx = json.loads(out)
    code, out, err = _run(capsys, "inspect", str(DEMO / "csv" / path.replace(".jdx", ".csv")), "--json")
    assert code == 0, err
    csv = json.loads(out)
    for key in ("points", "range_cm1"):
        assert jdx[key] == csv[key], key


@pytest.mark.parametrize(("file", "exit_code"), [("instrument/polystyrene-film_pass.jdx", 0),
                                                 ("instrument/polystyrene-film_scale-shifted.jdx", 1)])
def test_polystyrene_films_pass_and_fail_the_instrument_check(capsys: pytest.CaptureFixture[str], file: str,
                                                              exit_code: int) -> None:
    # Ph. Eur. 2.2.24 positions and resolution criteria, as implemented by check-polystyrene.
    code, _out, err = _run(capsys, "check-polystyrene", str(DEMO / file))
    assert code == exit_code, err


def test_evaluate_as_a_separate_process_exits_with_the_verdict_code() -> None:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    r = subprocess.run([sys.executable, "-m", "service", "evaluate",
                        str(DEMO / "samples/SOL-203_lot-KES-EA-0931_c1_wet.jdx"),
                        "--spec", str(DEMO / "specs/SOL-203.json"), "--reference", str(DEMO / "library/SOL-203.jdx")],
                       capture_output=True, text=True, cwd=ROOT, env=env, timeout=120)
    assert r.returncode == 1, r.stderr
