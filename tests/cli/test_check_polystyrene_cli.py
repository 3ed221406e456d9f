"""`bandgate check-polystyrene`: exit codes 0 (pass), 1 (fail), 2 (unusable), text and JSON output.

Spectrum: tests/data/jcamp/dupdec1.jdx (public-domain polystyrene film, see tests/data/jcamp/README.md);
reference values Ph. Eur. 2.2.24 as quoted in ../shared/domain.md.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from service.cli import main
from service.spectra import Spectrum, read_spectrum, write_jcamp

DUPDEC1 = Path(__file__).resolve().parents[1] / "data" / "jcamp" / "dupdec1.jdx"


def test_real_film_passes_with_exit_0(capsys) -> None:
    assert main(["check-polystyrene", str(DUPDEC1)]) == 0
    out = capsys.readouterr().out
    assert "overall: PASS" in out and "band 1601.2 cm⁻¹" in out and "not a qualification" in out


def test_json_output(capsys) -> None:
    assert main(["check-polystyrene", str(DUPDEC1), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["passed"] is True and doc["outcome"] == "pass" and doc["points"] == 3951
    assert len(doc["checks"]) == 9
    assert doc["notes"] and doc["y_kind"] == "percent_transmittance" and len(doc["sha256"]) == 64
    assert all({"name", "measured", "limit", "outcome"} <= set(c) for c in doc["checks"])


def test_axis_shifted_by_two_wavenumbers_fails_with_exit_1(tmp_path, capsys) -> None:
    film = read_spectrum(DUPDEC1.read_bytes(), file_name=DUPDEC1.name)
    shifted = Spectrum.create(film.x + 2.0, film.y, film.kind)
    path = tmp_path / "shifted.jdx"
    path.write_text(write_jcamp(shifted, form="affn"), encoding="utf-8")
    assert main(["check-polystyrene", str(path), "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["passed"] is False
    assert {c["name"] for c in doc["checks"] if c["outcome"] == "fail"} >= {"band 1601.2 cm⁻¹", "band 1028.3 cm⁻¹"}


@pytest.mark.parametrize("content", [b"", b"\x89PNG\r\n\x1a\n\x00\x00binary", b"not a spectrum at all\n"])
def test_unusable_file_exits_2_with_one_line(tmp_path, capsys, content) -> None:
    path = tmp_path / "bad.jdx"
    path.write_bytes(content)
    assert main(["check-polystyrene", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("bandgate: ") and "\n" not in err and "Traceback" not in err


def test_missing_file_and_narrow_range_exit_2(tmp_path, capsys) -> None:
    assert main(["check-polystyrene", str(tmp_path / "nope.jdx")]) == 2
    assert "cannot read" in capsys.readouterr().err
    film = read_spectrum(DUPDEC1.read_bytes(), file_name=DUPDEC1.name)
    sel = film.x > 1500
    path = tmp_path / "narrow.jdx"
    path.write_text(write_jcamp(Spectrum.create(film.x[sel], film.y[sel], film.kind)), encoding="utf-8")
    assert main(["check-polystyrene", str(path)]) == 2
    assert "covers" in capsys.readouterr().err
