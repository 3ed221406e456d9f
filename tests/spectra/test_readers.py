"""read_spectrum: format told from the content, refusals that name the accepted formats, the
SHA-256 of the original bytes, and robustness: random bytes and mutated real files (the
public-domain IUPAC JCAMP-DX test files, tests/data/jcamp) raise nothing but ReaderError.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.errors import UnusableInput
from service.spectra import ReaderError, YKind, read_spectrum
from service.spectra.reader_errors import ACCEPTED_FORMATS

DATA = Path(__file__).resolve().parents[1] / "data" / "jcamp"
CSV = "wavenumber,absorbance\n" + "".join(f"{4000 - 10 * i},{0.1 + 0.001 * (i % 7)}\n" for i in range(100))


def test_format_is_told_from_content_not_file_name() -> None:
    jdx = (DATA / "dupdec1.jdx").read_bytes()
    s = read_spectrum(jdx, file_name="export.csv")
    assert s.meta.format == "jcamp-dx" and s.meta.file_name == "export.csv"
    c = read_spectrum(CSV.encode(), file_name="spectrum.jdx")
    assert c.meta.format == "delimited-text" and c.kind is YKind.absorbance


def test_sha256_of_the_original_bytes_is_recorded() -> None:
    data = (DATA / "fixinc2.jdx").read_bytes()  # CRLF and a Ctrl-Z: hashed as received
    assert read_spectrum(data).meta.sha256 == hashlib.sha256(data).hexdigest()


def test_reader_error_is_the_typed_unusable_input() -> None:
    assert issubclass(ReaderError, UnusableInput)


@pytest.mark.parametrize(
    ("data", "what"),
    [
        (b"", "empty"),
        (b"   \r\n\t\n", "empty"),
        (b"\x89PNG\r\n\x1a\n" + bytes(64), "PNG image"),
        (b"\xff\xd8\xff\xe0" + bytes(64), "JPEG image"),
        (b"%PDF-1.7\n%\xe2\xe3", "PDF document"),
        (b"PK\x03\x04" + bytes(40), "ZIP container"),
        (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(40), "OLE compound document"),
        (bytes(range(256)) * 4, "binary"),
        (b"Dear colleague,\nplease find the spectrum attached.\n", "neither JCAMP-DX nor columns"),
    ],
)
def test_other_content_is_refused_naming_the_accepted_formats(data: bytes, what: str) -> None:
    with pytest.raises(ReaderError) as info:
        read_spectrum(data, file_name="x.jdx")
    assert what in str(info.value)
    assert ACCEPTED_FORMATS in str(info.value)


def test_read_spectrum_takes_bytes() -> None:
    with pytest.raises(ReaderError):
        read_spectrum(CSV)  # type: ignore[arg-type]


def test_utf16_text_with_bom_is_read() -> None:
    s = read_spectrum(CSV.encode("utf-16"))
    assert s.n_points == 100


# -- robustness (bounded property tests) ---------------------------------------------------------

@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.binary(max_size=3000))
def test_random_bytes_raise_only_the_reader_error(data: bytes) -> None:
    try:
        read_spectrum(data)
    except ReaderError:
        pass


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.sampled_from(list("0123456789.,;\t +-eE\n#=$?@AJSajs%T")), max_size=400).map("".join))
def test_random_text_of_the_right_alphabet_raises_only_the_reader_error(text: str) -> None:
    for prefix in ("", "##TITLE=t\n##XYDATA=(X++(Y..Y))\n"):
        try:
            read_spectrum((prefix + text).encode())
        except ReaderError:
            pass


_REAL = ["dupdec1", "fixinc2", "pacdec1", "compound", "xyinc1", "jtpolysd"]
_ALPHABET = b"0123456789 .,+-\r\n#=$?@AIaiJRjrSsZ%EeX\x1a\x00"


@st.composite
def mutated_file(draw: st.DrawFn) -> bytes:
    data = bytearray((DATA / f"{draw(st.sampled_from(_REAL))}.jdx").read_bytes())
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["flip", "delete", "insert", "truncate", "duplicate"]))
        pos = draw(st.integers(0, max(0, len(data) - 1)))
        if op == "flip" and data:
            data[pos] = draw(st.sampled_from(_ALPHABET))
        elif op == "delete":
            del data[pos:pos + draw(st.integers(1, 200))]
        elif op == "insert":
            data[pos:pos] = draw(st.binary(min_size=1, max_size=20))
        elif op == "truncate":
            del data[pos:]
        else:
            data[pos:pos] = data[pos:pos + draw(st.integers(1, 300))]
    return bytes(data)


@settings(max_examples=250, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(mutated_file())
def test_mutated_real_files_raise_only_the_reader_error(data: bytes) -> None:
    """Mutations of the public-domain IUPAC files: either read, or refused with ReaderError."""
    try:
        s = read_spectrum(data)
    except ReaderError as exc:
        assert str(exc)
        return
    assert np.isfinite(s.y).all() and np.all(np.diff(s.x) > 0)
