"""`bandgate inspect` on the public-domain IUPAC JCAMP-DX test files (tests/data/jcamp) and on bad input."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from service.cli import main

ROOT = Path(__file__).resolve().parents[2]
DATA = ROOT / "tests" / "data" / "jcamp"


def test_inspect_prints_what_was_read(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["inspect", str(DATA / "dupdec1.jdx")]) == 0
    out = capsys.readouterr().out
    assert "dupdec1.jdx: jcamp-dx" in out
    assert "3951, 450–4400 cm⁻¹" in out
    assert "percent_transmittance" in out
    assert "124 Y checks passed" in out
    assert "quality" in out and "saturation" in out
    assert "advice to qualified staff" in out


def test_inspect_json_has_the_promised_fields(capsys: pytest.CaptureFixture[str]) -> None:
    """IUPAC fixinc2.jdx: indene, absorbance, 3601 points 400-4000 cm⁻¹."""
    assert main(["inspect", str(DATA / "fixinc2.jdx"), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    for key in ("x", "y", "y_kind", "format", "notes", "quality"):
        assert key in doc
    assert len(doc["x"]) == len(doc["y"]) == 3601
    assert doc["x"][0] == 400.0 and doc["x"][-1] == 4000.0 and doc["x"] == sorted(doc["x"])
    assert doc["y_kind"] == "absorbance" and doc["format"] == "jcamp-dx"
    assert {f["name"] for f in doc["quality"]["findings"]} >= {"saturation", "noise"}


def test_inspect_picks_a_block_of_a_compound_file(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["inspect", str(DATA / "compound.jdx")]) == 2
    assert "--block N (1-5)" in capsys.readouterr().err
    assert main(["inspect", str(DATA / "compound.jdx"), "--block", "3", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert len(doc["x"]) == 3951 and "block 3 of 5" in doc["notes"]


def test_inspect_overrides_are_passed_on(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "nm.csv"
    path.write_text("".join(f"{1e7 / (4000 - 10 * i):.4f},{0.1 + 0.01 * (i % 5):.3f}\n" for i in range(300)))
    assert main(["inspect", str(path), "--x-unit", "nm", "--y-kind", "absorbance", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["x"][-1] == pytest.approx(4000.0)
    assert any("set by the caller" in n for n in doc["notes"])


@pytest.mark.parametrize("content", [b"", b"\x89PNG\r\n\x1a\n" + bytes(100), b"##TITLE=x\n##XYDATA=(X++(Y..Y))\n"])
def test_unusable_input_exits_2_with_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                              content: bytes) -> None:
    path = tmp_path / "bad.jdx"
    path.write_bytes(content)
    assert main(["inspect", str(path)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("bandgate: ")


def test_missing_file_exits_2(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["inspect", str(tmp_path / "nope.jdx")]) == 2
    assert "cannot read" in capsys.readouterr().err


@pytest.mark.slow
def test_no_traceback_from_the_real_command(tmp_path: Path) -> None:
    path = tmp_path / "garbage.csv"
    path.write_bytes(bytes(range(256)) * 8)
    proc = subprocess.run([sys.executable, "-m", "service", "inspect", str(path)], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stderr and proc.stderr.count("\n") == 1
