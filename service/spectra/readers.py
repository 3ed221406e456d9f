"""`read_spectrum`: one entry point for every accepted file, the format told from the content.

The file name is recorded but never trusted: JCAMP-DX is recognised by its ``##`` records,
delimited text by its columns of numbers. Anything else (binary instrument files, images,
office documents, empty files) is refused with a message that names the accepted formats.
The SHA-256 of the original bytes goes into the spectrum's metadata, so a stored result can be
tied to exactly the file it came from.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import replace

from service.spectra.axis_units import XUnit
from service.spectra.delimited import read_sniffed, sniff
from service.spectra.jcamp_reader import JcampBlock, PeakTable, read_jcamp_blocks
from service.spectra.model import Spectrum, YKind
from service.spectra.reader_errors import ACCEPTED_FORMATS, CompoundFileError, ReaderError

_CONTROL = re.compile(r"[\x00-\x08\x0b\x0e-\x1f\x7f]")
# bytes.translate deleting these leaves only the control characters of an ASCII text (at memory
# speed); non-ASCII text takes the regex
_PRINTABLE = bytes(i for i in range(128) if not _CONTROL.match(chr(i)))
_MAGIC = (
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF8", "a GIF image"),
    (b"%PDF", "a PDF document"),
    (b"PK\x03\x04", "a ZIP container (for example a spreadsheet workbook)"),
    (b"\xd0\xcf\x11\xe0", "an OLE compound document (for example an old spreadsheet)"),
    (b"II*\x00", "a TIFF image"),
    (b"MM\x00*", "a TIFF image"),
    (b"\x1f\x8b", "a gzip archive"),
    (b"BM", "a bitmap image"),
)


def decode_text(data: bytes) -> str:
    """The bytes as text with ``\\n`` line ends, or a ReaderError saying what they are instead.

    UTF-8 (with or without a BOM) is tried first, then Latin-1 (older instrument software);
    a trailing DOS end-of-file mark (Ctrl-Z) is dropped. NUL bytes or other control
    characters mean a binary file.
    """
    if not data or not data.strip():
        raise ReaderError(f"the file is empty; accepted formats: {ACCEPTED_FORMATS}")
    for magic, what in _MAGIC:
        if data.startswith(magic) and (magic != b"BM" or b"\x00" in data[:64]):
            raise ReaderError(f"the file is {what}, not a spectrum; accepted formats: {ACCEPTED_FORMATS}")
    if data.startswith(b"\xff\xfe") or data.startswith(b"\xfe\xff"):
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError:
            raise ReaderError(f"the file is damaged UTF-16 text; accepted formats: {ACCEPTED_FORMATS}") from None
    else:
        body = data[3:] if data.startswith(b"\xef\xbb\xbf") else data
        try:
            text = body.decode("utf-8")
        except UnicodeDecodeError:
            text = body.decode("latin-1")
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    text = text.rstrip("\x1a")
    if text.startswith("\ufeff"):
        text = text[1:]
    if text.isascii():
        binary = bool(text.encode("ascii").translate(None, _PRINTABLE))
    else:
        binary = _CONTROL.search(text) is not None
    if binary:
        raise ReaderError(
            f"the file is binary (an instrument's own format?), not text; export it as JCAMP-DX or CSV. "
            f"Accepted formats: {ACCEPTED_FORMATS}"
        )
    return text


def detect_format(text: str) -> str:
    """``"jcamp-dx"`` or ``"delimited-text"``, from the content alone."""
    return _detect(text)[0]


def _detect(text: str) -> tuple[str, tuple[str | None, str, bool] | None]:
    """(format, the delimited layout found by ``sniff`` -- None for JCAMP-DX), so it is sniffed once."""
    head = text.lstrip()
    while head.startswith("$$"):
        nl = head.find("\n")
        head = head[nl + 1:].lstrip() if nl >= 0 else ""
    if head.startswith("##"):
        return "jcamp-dx", None
    found = sniff(text)
    if found is not None:
        return "delimited-text", found
    raise ReaderError(f"the content is neither JCAMP-DX nor columns of numbers; accepted formats: {ACCEPTED_FORMATS}")


def read_spectrum(
    data: bytes,
    *,
    file_name: str = "",
    x_unit: str | XUnit | None = None,
    y_kind: YKind | str | None = None,
) -> Spectrum:
    """Read one infrared spectrum from the bytes of a file.

    Parameters
    ----------
    data
        The file's bytes, as received (their SHA-256 is recorded).
    file_name
        Recorded in the metadata only; the format is told from the content.
    x_unit, y_kind
        Overrides for the abscissa unit (``"cm-1"``, ``"um"``, ``"nm"``) and the value kind,
        for files that say nothing or say it wrongly; each override is noted on the spectrum.

    Raises
    ------
    ReaderError
        For anything that is not exactly one readable infrared spectrum.
    """
    if not isinstance(data, (bytes, bytearray, memoryview)):
        raise ReaderError("read_spectrum takes the file's bytes")
    data = bytes(data)
    text = decode_text(data)
    fmt, layout = _detect(text)
    if fmt == "jcamp-dx":
        spectrum = _one_jcamp_spectrum(read_jcamp_blocks(text, x_unit=x_unit, y_kind=y_kind))
    else:
        spectrum = read_sniffed(text, layout, x_unit=x_unit, y_kind=y_kind)
    meta = replace(spectrum.meta, sha256=hashlib.sha256(data).hexdigest(), file_name=file_name, format=fmt)
    return replace(spectrum, meta=meta)


def read_jcamp_file(
    data: bytes, *, x_unit: str | XUnit | None = None, y_kind: YKind | str | None = None
) -> list[JcampBlock]:
    """Every block of a JCAMP-DX file (see :func:`read_jcamp_blocks`), from its bytes."""
    text = decode_text(bytes(data))
    if detect_format(text) != "jcamp-dx":
        raise ReaderError("this is not a JCAMP-DX file (it does not start with a ##TITLE= record)")
    blocks = read_jcamp_blocks(text, x_unit=x_unit, y_kind=y_kind)
    digest = hashlib.sha256(bytes(data)).hexdigest()
    out = []
    for b in blocks:
        if b.spectrum is not None:
            b = replace(b, spectrum=replace(b.spectrum, meta=replace(b.spectrum.meta, sha256=digest)))
        out.append(b)
    return out


def read_peak_table(data: bytes) -> PeakTable:
    """The ``##PEAK TABLE`` of a JCAMP-DX file, as a list of peaks (never as a spectrum)."""
    tables = [b.peaks for b in read_jcamp_file(data) if b.peaks is not None]
    if not tables:
        raise ReaderError("the file holds no ##PEAK TABLE=")
    if len(tables) > 1:
        raise ReaderError(f"the file holds {len(tables)} peak tables; export one")
    return tables[0]


def _one_jcamp_spectrum(blocks: list[JcampBlock]) -> Spectrum:
    spectra = [b for b in blocks if b.spectrum is not None]
    if len(blocks) == 1:
        b = blocks[0]
        if b.peaks is not None:
            raise ReaderError(
                f"the file holds a peak table ({len(b.peaks.peaks)} peaks), not a spectrum; "
                "identity testing needs the full spectrum: export it as ##XYDATA="
            )
        assert b.spectrum is not None
        _check_infrared(b)
        return b.spectrum
    if len(spectra) == 1 and all(b.error is None for b in blocks):
        _check_infrared(spectra[0])
        return spectra[0].spectrum  # type: ignore[return-value]
    listed = "; ".join(
        f"{b.index}: {b.title or 'untitled'}" + (f" (unreadable: {b.error})" if b.error else "") for b in blocks[:6]
    )
    more = f"; and {len(blocks) - 6} more" if len(blocks) > 6 else ""
    raise CompoundFileError(
        f"the file is a compound JCAMP-DX file with {len(blocks)} blocks ({listed}{more}); one spectrum per file "
        "is read: export the spectrum you need on its own",
        blocks=[(b.index, b.title, b.error) for b in blocks],
    )


def _check_infrared(block: JcampBlock) -> None:
    dt = block.data_type.upper()
    if dt and "INFRARED" not in dt and not dt.startswith("IR"):
        raise ReaderError(f"the file holds a {block.data_type.lower()}, not an infrared spectrum")
    if "INTERFEROGRAM" in dt:
        raise ReaderError("the file holds an interferogram, not a spectrum; export the transformed spectrum")
