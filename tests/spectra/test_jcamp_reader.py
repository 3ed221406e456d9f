"""JCAMP-DX reader against the public-domain IUPAC JCAMP-DX test files.

Source of every file used here: the JCAMP-DX test collection of R. J. Lancashire (UWI Mona),
files marked ``##OWNER= public domain``, as shipped in the jcamp 1.3.2 sdist; see
tests/data/jcamp/README.md. Header values (NPOINTS, FIRSTX, LASTX) are read in these tests
with a plain regex, independently of the reader under test.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
from jcamp_oracle import decode as oracle_decode
from jcamp_oracle import xydata_lines

from service.spectra import (
    CompoundFileError,
    ReaderError,
    YKind,
    read_jcamp_file,
    read_peak_table,
    read_spectrum,
    to_absorbance,
)
from service.spectra.jcamp_asdf import decode_xydata

DATA = Path(__file__).resolve().parents[1] / "data" / "jcamp"
IR_FILES = ["fixinc1", "fixinc2", "fixdec1", "xyinc1", "dupdec1", "dupdec2", "dupinc2", "pacdec1", "sqzdupd1",
            "jtpolys"]


def raw(name: str) -> bytes:
    return (DATA / f"{name}.jdx").read_bytes()


def header(name: str, label: str) -> float:
    text = raw(name).decode("latin-1")
    m = re.search(rf"^##{label}=\s*([-+0-9.eE]+)", text, re.M)
    assert m, label
    return float(m.group(1))


def body_of(text: str) -> tuple[str, int]:
    lines = text.replace("\r\n", "\n").rstrip("\x1a\n").split("\n")
    start = next(i for i, ln in enumerate(lines) if ln.upper().startswith("##XYDATA"))
    end = next(i for i in range(start + 1, len(lines)) if lines[i].lstrip().startswith("##"))
    return "\n".join(lines[start + 1:end]), start + 2


# -- every IR file decodes to its declared number of points, X and Y checks honoured -------------

@pytest.mark.parametrize("name", IR_FILES)
def test_iupac_ir_file_decodes_to_declared_npoints(name: str) -> None:
    """IUPAC test file: point count, axis ends and first ordinate as the header declares."""
    s = read_spectrum(raw(name), file_name=f"{name}.jdx")
    assert s.n_points == int(header(name, "NPOINTS"))
    ends = sorted([header(name, "FIRSTX"), header(name, "LASTX")])
    assert s.range_cm1 == pytest.approx(ends, abs=1e-9)
    assert s.meta.format == "jcamp-dx" and s.meta.file_name == f"{name}.jdx"
    assert any("X checks passed" in n for n in s.notes)


@pytest.mark.parametrize("name", IR_FILES + ["jtpolysd"])
def test_vectorised_decoder_matches_slow_oracle_on_iupac_files(name: str) -> None:
    """Oracle: a character-by-character decoder written from the standard (tests/spectra/jcamp_oracle.py)."""
    text = raw(name).decode("latin-1")
    ys, xs, idx = oracle_decode(xydata_lines(text))
    body, first = body_of(text)
    table = decode_xydata(body, first)
    np.testing.assert_array_equal(table.y, np.array(ys))
    np.testing.assert_allclose(table.line_x, xs, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(table.line_index, idx)


def test_difdup_files_honour_every_y_check() -> None:
    """dupdec1.jdx: 125 data lines in DIF form, so 124 Y checks (each line repeats the last ordinate)."""
    s = read_spectrum(raw("dupdec1"))
    assert any("124 Y checks passed" in n for n in s.notes)


def test_damaged_dif_digit_fails_the_y_check_naming_the_line() -> None:
    """dupdec1.jdx with one DIF character changed on file line 40: the Y check on line 41 fails."""
    lines = raw("dupdec1").decode("ascii").split("\r\n")
    line = lines[39]
    i = next(k for k in range(10, len(line)) if line[k] in "JKLMNOPQjklmnopq")
    lines[39] = line[:i] + chr(ord(line[i]) + 1) + line[i + 1:]
    with pytest.raises(ReaderError, match=r"Y check failed on line 41"):
        read_spectrum("\r\n".join(lines).encode())


def test_missing_ordinate_fails_the_x_check_naming_the_line() -> None:
    """fixinc2.jdx (AFFN, 11 ordinates a line) with one ordinate removed from line 40."""
    lines = raw("fixinc2").decode("ascii").split("\r\n")
    assert lines[39].split()[0] == "587"
    lines[39] = " ".join(lines[39].split()[:-1])
    with pytest.raises(ReaderError, match=r"X check failed on line 41: the line starts at x = 598"):
        read_spectrum("\r\n".join(lines).encode())


@pytest.mark.parametrize(
    ("label", "new", "pattern"),
    [
        ("NPOINTS", "3600", r"##NPOINTS= says 3600 points but the ##XYDATA= table holds 3601"),
        ("FIRSTX", "401.000", r"##FIRSTX= says 401.000 but the first data line .* starts at 400"),
        ("LASTX", "4002.000", r"X check failed on line"),
        ("FIRSTY", "0.3500", r"##FIRSTY= says 0.3500 but the data begin with 0.3487"),
        ("DELTAX", "1.01", r"##DELTAX= says 1.01 but .* give 1"),
    ],
)
def test_header_disagreeing_with_data_is_an_error_naming_both_values(label: str, new: str, pattern: str) -> None:
    """fixinc2.jdx with one header value changed beyond rounding."""
    text = raw("fixinc2").decode("ascii")
    text, n = re.subn(rf"^##{label}=[^\r\n]*", f"##{label}={new}", text, count=1, flags=re.M)
    assert n == 1
    with pytest.raises(ReaderError, match=pattern):
        read_spectrum(text.encode())


def test_header_rounded_as_written_is_accepted() -> None:
    """fixdec1.jdx writes FIRSTY=64.915 for 68068800 × 9.5367E-7 = 64.9152: within its last digit."""
    assert read_spectrum(raw("fixdec1")).n_points == 3951


def test_real_header_defect_is_caught_naming_both_values() -> None:
    """jtpolysd.jdx says YFACTOR=2.3884185791e-09 where its twin jtpolys.jdx says 2.384185791e-09;
    its FIRSTY agrees with the twin, so the file contradicts itself."""
    with pytest.raises(ReaderError, match=r"##FIRSTY= says 9.81633484363556E-0001 but the data begin with 0.98337"):
        read_spectrum(raw("jtpolysd"))


# -- plain and compressed versions of the same spectrum decode to the same values ----------------

def test_plain_and_difdup_versions_of_polystyrene_decode_to_the_same_ordinates() -> None:
    """jtpolys.jdx (AFFN) and jtpolysd.jdx (DIFDUP) hold the same polystyrene data."""
    a = decode_xydata(*body_of(raw("jtpolys").decode("latin-1")))
    b = decode_xydata(*body_of(raw("jtpolysd").decode("latin-1")))
    assert a.y.size == b.y.size == 1844
    np.testing.assert_array_equal(a.y, b.y)
    plain = read_spectrum(raw("jtpolys"))
    text = raw("jtpolysd").decode("latin-1").replace("2.3884185791e-09", "2.384185791e-09")
    fixed = read_spectrum(text.encode("latin-1"))
    np.testing.assert_allclose(fixed.x, plain.x, atol=1e-3)
    np.testing.assert_allclose(fixed.y, plain.y, rtol=1e-9)


def test_real_difdup_file_reencoded_as_affn_decodes_to_the_same_values() -> None:
    """dupdec1.jdx (DIFDUP) written again in AFFN and PAC by our writer reads back unchanged."""
    from service.spectra import write_jcamp

    s = read_spectrum(raw("dupdec1"))
    for form in ("affn", "pac", "sqz", "dif"):
        again = read_spectrum(write_jcamp(s, form=form, y_factor=0.01).encode())
        np.testing.assert_allclose(again.y, s.y, atol=0.005 + 1e-9)
        np.testing.assert_allclose(again.x, s.x, atol=1e-9)


# -- transmittance and absorbance files of the same sample agree through A = -log10 T ------------

def test_absorbance_and_transmittance_files_of_indene_agree() -> None:
    """fixinc2.jdx (indene, absorbance, 4 decimals) and xyinc1.jdx (indene, transmittance, 4 decimals):
    A = -log10 T within the rounding of both files, where T > 0.002. Below that the absorbance file
    holds its writer's ceiling of 3.0 and our conversion flags the clipped points."""
    a = read_spectrum(raw("fixinc2"))
    t = read_spectrum(raw("xyinc1"))
    assert a.kind is YKind.absorbance and t.kind is YKind.transmittance
    np.testing.assert_array_equal(a.x, t.x)
    converted = to_absorbance(t)
    ok = t.y > 0.002
    tol = 0.5e-4 / (t.y[ok] * np.log(10)) + 0.5e-4
    assert np.all(np.abs(converted.y[ok] - a.y[ok]) <= tol * 1.0001)
    assert np.all(a.y[~ok] >= 2.69)
    assert "clipped" in converted.notes[-1]


# -- multi-block files ------------------------------------------------------------------------

def test_compound_file_is_read_block_by_block() -> None:
    """compound.jdx: ##DATA TYPE=LINK, ##BLOCKS=5, five IR spectra in DIFDUP form."""
    blocks = read_jcamp_file(raw("compound"))
    assert [b.index for b in blocks] == [1, 2, 3, 4, 5]
    assert [b.spectrum.n_points for b in blocks if b.spectrum] == [1976, 1976, 3951, 1976, 3951]
    assert blocks[3].title == "trans-[Rh(py)4Cl2]Cl.5H2O"
    assert all(b.error is None for b in blocks)


def test_compound_file_is_refused_where_one_spectrum_is_needed() -> None:
    with pytest.raises(CompoundFileError, match=r"compound JCAMP-DX file with 5 blocks") as info:
        read_spectrum(raw("compound"))
    assert len(info.value.blocks) == 5


def test_blocks_with_contradicting_headers_are_refused_each_with_its_reason() -> None:
    """blckpac1.jdx: every block's FIRSTY (0.17-0.19) is not its first ordinate (about -0.006)."""
    blocks = read_jcamp_file(raw("blckpac1"))
    assert len(blocks) == 5
    assert all(b.spectrum is None and "##FIRSTY= says" in (b.error or "") for b in blocks)
    with pytest.raises(ReaderError, match="5 blocks"):
        read_spectrum(raw("blckpac1"))


# -- labels, comments, units, tables (small files written for these tests) -----------------------

def _mini(header_lines: list[str], table: str, data: list[str]) -> bytes:
    return ("\n".join(["##TITLE=mini", *header_lines, table, *data, "##END="]) + "\n").encode()


def _points(n: int = 20, x0: float = 1000.0, dx: float = 10.0) -> list[str]:
    return [f"{x0 + i * dx:g} {100 + i}" for i in range(n)]


def test_labels_are_matched_tolerantly() -> None:
    """JCAMP-DX 4.24 section 3: labels compare without case, spaces, dashes, slashes, underscores."""
    head = ["##jcamp_dx=4.24", "##Data-Type= INFRARED SPECTRUM", "##x units=1/CM", "##Y_UNITS=ABSORBANCE",
            "##X Factor=1", "##yfactor=0.001", "##first x=1000", "##Last-X=1190", "##n points=20",
            "##FIRST_Y=0.1"]
    s = read_spectrum(_mini(head, "##XY_DATA=(X++(Y..Y))", _points()))
    assert s.n_points == 20 and s.y[0] == pytest.approx(0.1)


def test_comments_are_ignored_everywhere() -> None:
    head = ["##JCAMP-DX=4.24 $$ comment", "$$ a comment line", "##XUNITS=1/CM", "##YUNITS=ABSORBANCE $$ A",
            "##XFACTOR=1", "##YFACTOR=0.001", "##FIRSTX=1000", "##LASTX=1190", "##NPOINTS=20"]
    data = _points()
    data[3] += " $$ trailing comment"
    data.insert(5, "$$ whole comment line in the table")
    assert read_spectrum(_mini(head, "##XYDATA=(X++(Y..Y))", data)).n_points == 20


@pytest.mark.parametrize(("unit", "factor"), [("MICROMETERS", 1e4), ("NANOMETERS", 1e7)])
def test_wavelength_axes_are_converted_to_wavenumber(unit: str, factor: float) -> None:
    """Definition of the wavenumber: 1/λ; 2.5 µm = 2500 nm = 4000 cm⁻¹."""
    scale = 1.0 if unit == "MICROMETERS" else 1000.0
    xs = np.linspace(2.5, 25.0, 30) * scale
    data = [f"{x:.6f}, {0.1 + 0.01 * i:.4f}" for i, x in enumerate(xs)]
    head = [f"##XUNITS={unit}", "##YUNITS=ABSORBANCE", "##XFACTOR=1", "##YFACTOR=1", "##NPOINTS=30"]
    s = read_spectrum(_mini(head, "##XYPOINTS=(XY..XY)", data))
    assert s.range_cm1 == pytest.approx((factor / xs[-1], factor / xs[0]))
    assert s.range_cm1[1] == pytest.approx(4000.0)
    assert any("converted to wavenumber" in n for n in s.notes)


def test_xypoints_table_is_read_and_cross_checked() -> None:
    head = ["##XUNITS=1/CM", "##YUNITS=TRANSMITTANCE", "##XFACTOR=1", "##YFACTOR=0.01", "##NPOINTS=20",
            "##FIRSTX=1000", "##LASTX=1190"]
    data = [f"{1000 + 10 * i}, {90 - i}" for i in range(20)]
    s = read_spectrum(_mini(head, "##XYPOINTS=(XY..XY)", data))
    assert s.kind is YKind.transmittance and s.y[0] == pytest.approx(0.90)
    bad = _mini([h.replace("NPOINTS=20", "NPOINTS=21") for h in head], "##XYPOINTS=(XY..XY)", data)
    with pytest.raises(ReaderError, match="##NPOINTS= says 21 points but the ##XYPOINTS= table holds 20"):
        read_spectrum(bad)


def test_peak_table_is_read_as_peaks_not_as_a_spectrum() -> None:
    head = ["##DATA TYPE=INFRARED PEAK TABLE", "##XUNITS=1/CM", "##YUNITS=ABSORBANCE", "##XFACTOR=1",
            "##YFACTOR=1", "##NPOINTS=3"]
    data = ["3060.0, 0.21; 1601.2, 0.35", "1028.3, 0.40"]
    file = _mini(head, "##PEAK TABLE=(XY..XY)", data)
    table = read_peak_table(file)
    assert [p.position_cm1 for p in table.peaks] == [1028.3, 1601.2, 3060.0]
    assert table.kind is YKind.absorbance
    with pytest.raises(ReaderError, match=r"peak table \(3 peaks\), not a spectrum"):
        read_spectrum(file)


@pytest.mark.parametrize(
    ("line", "pattern"),
    [
        ("1000 J5 K3", r"difference \(DIF\) with nothing before it"),
        ("1000 S5", r"repeat count \(DUP\) with nothing to repeat"),
        ("1000 100 ? 102", r"'\?' marks a missing value"),
        ("1000 100 1x2", r"character 'x' in the data on line 10"),
        ("1000 100 1.2.3", r"two decimal points"),
        ("1000 100 1..2", r"two in a row"),
        ("1000 100 +J5", r"a sign without digits"),
    ],
)
def test_malformed_data_lines_are_errors_naming_the_problem(line: str, pattern: str) -> None:
    head = ["##XUNITS=1/CM", "##YUNITS=ABSORBANCE", "##XFACTOR=1", "##YFACTOR=1", "##FIRSTX=1000",
            "##LASTX=1190", "##NPOINTS=20"]
    with pytest.raises(ReaderError, match=pattern):
        read_spectrum(_mini(head, "##XYDATA=(X++(Y..Y))", [line]))


def test_missing_required_header_is_named() -> None:
    head = ["##XUNITS=1/CM", "##YUNITS=ABSORBANCE", "##XFACTOR=1", "##YFACTOR=1", "##LASTX=1190", "##NPOINTS=20"]
    with pytest.raises(ReaderError, match=r"##FIRSTX= is missing"):
        read_spectrum(_mini(head, "##XYDATA=(X++(Y..Y))", _points()))


def test_non_infrared_data_type_is_refused() -> None:
    head = ["##DATA TYPE=NMR SPECTRUM", "##XUNITS=1/CM", "##YUNITS=ABSORBANCE", "##XFACTOR=1", "##YFACTOR=1",
            "##FIRSTX=1000", "##LASTX=1190", "##NPOINTS=20"]
    with pytest.raises(ReaderError, match="nmr spectrum, not an infrared spectrum"):
        read_spectrum(_mini(head, "##XYDATA=(X++(Y..Y))", _points()))


def test_unknown_yunits_needs_the_caller_to_say_and_is_overridable() -> None:
    head = ["##XUNITS=1/CM", "##YUNITS=ARBITRARY UNITS", "##XFACTOR=1", "##YFACTOR=0.001", "##FIRSTX=1000",
            "##LASTX=1190", "##NPOINTS=20"]
    file = _mini(head, "##XYDATA=(X++(Y..Y))", _points())
    with pytest.raises(ReaderError, match="cannot tell what the values are"):
        read_spectrum(file)
    s = read_spectrum(file, y_kind="absorbance")
    assert s.kind is YKind.absorbance and any("set by the caller" in n for n in s.notes)


def test_metadata_is_taken_from_the_header() -> None:
    """dupdec1.jdx (public-domain IUPAC test file): instrument line and date 97/01/01 13:24:13."""
    import re

    data = raw("dupdec1")
    declared = re.search(rb"##SPECTROMETER/DATA SYSTEM=([^\r\n]*)", data)
    s = read_spectrum(data)
    assert declared is not None and s.meta.instrument == declared.group(1).decode().strip() != ""
    assert s.meta.measured_at is not None and s.meta.measured_at.isoformat() == "1997-01-01T13:24:13"
    assert read_spectrum(raw("fixinc2")).meta.resolution_cm1 == 2.0


@pytest.mark.parametrize(("longdate", "offset_minutes"), [
    ("2026/11/29 08:15:00 +0100", 60), ("2026/11/29 08:15:00.25 -05:30", -330), ("2026/11/29 08:15:00 UTC", 0),
    ("2026/11/29 08:15:00", None)])
def test_longdate_keeps_its_utc_offset(longdate: str, offset_minutes: int | None) -> None:
    """JCAMP-DX 5.01: ##LONGDATE=YYYY/MM/DD HH:MM:SS[.SSSS] [+-]UUUU, the offset from UTC; none: a naive time."""
    from datetime import timedelta

    head = ["##XUNITS=1/CM", "##YUNITS=ABSORBANCE", "##XFACTOR=1", "##YFACTOR=0.001", "##FIRSTX=1000",
            "##LASTX=1190", "##NPOINTS=20", f"##LONGDATE={longdate}"]
    t = read_spectrum(_mini(head, "##XYDATA=(X++(Y..Y))", _points())).meta.measured_at
    assert t is not None and (t.year, t.month, t.day, t.hour, t.minute) == (2026, 11, 29, 8, 15)
    if offset_minutes is None:
        assert t.tzinfo is None
    else:
        assert t.utcoffset() == timedelta(minutes=offset_minutes)
