"""JCAMP-DX reader (IUPAC 4.24 and 5.01 infrared files): blocks, tables, header cross-checks.

References: McDonald & Wilks, "JCAMP-DX: A Standard Form for Exchange of Infrared Spectra in
Computer Readable Form", Appl. Spectrosc. 42 (1988) 151-162 (4.24); Lampen et al., Appl.
Spectrosc. 48 (1994) 1545 (5.01, compound files and ``##BLOCKS``).

Strict about numbers, tolerant about labels: a header that disagrees with the data beyond the
rounding of its last written digit is an error naming both values; a label spelt with other
case, spaces, dashes, slashes or underscores is the same label.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.spectra.axis_units import (
    XUnit,
    guess_x_unit,
    parse_x_unit,
    parse_y_kind,
    to_wavenumber,
    transmittance_scale,
    x_unit_label,
    y_kind_from_label,
)
from service.spectra.jcamp_asdf import decode_pairs, decode_xydata
from service.spectra.jcamp_labels import Block, WrittenNumber, group_blocks, split_records
from service.spectra.model import Spectrum, SpectrumError, SpectrumMeta, YKind
from service.spectra.reader_errors import ReaderError

FORMAT = "jcamp-dx"


@dataclass(frozen=True)
class Peak:
    """One row of a ``##PEAK TABLE``: position (cm⁻¹), intensity, and width if the table has one."""

    position_cm1: float
    intensity: float
    width: float | None = None


@dataclass(frozen=True)
class PeakTable:
    """A list of peaks as a file gives them: not a spectrum, and never compared as one."""

    peaks: tuple[Peak, ...]
    kind: YKind | None
    meta: SpectrumMeta = field(default_factory=SpectrumMeta)
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class JcampBlock:
    """One data block of a file: a spectrum, a peak table, or the reason it could not be read."""

    index: int  # 1-based, in file order
    title: str
    data_type: str
    spectrum: Spectrum | None = None
    peaks: PeakTable | None = None
    error: str | None = None


@dataclass(frozen=True)
class _Options:
    x_unit: XUnit | None
    y_kind: YKind | None


def parse_jcamp_text(text: str) -> tuple[Block, list[Block]]:
    """Outer block and inner blocks of JCAMP-DX text (``\\n`` line ends)."""
    return group_blocks(split_records(text))


def read_jcamp_blocks(text: str, *, x_unit: str | None = None, y_kind: YKind | str | None = None) -> list[JcampBlock]:
    """Read every data block of a JCAMP-DX text, one result per block.

    A plain file gives one block. A compound file (``##DATA TYPE=LINK``, ``##BLOCKS=n``) gives
    one per inner block; a block that cannot be read carries its reason in ``error`` instead of
    hiding the others.
    """
    opts = _Options(parse_x_unit(x_unit), parse_y_kind(y_kind))
    outer, inner = parse_jcamp_text(text)
    if "LINK" not in outer.text("DATATYPE").upper():
        return [_read_block(outer, 1, opts, raise_errors=True)]
    declared = outer.number("BLOCKS")
    if declared is not None and int(declared.value) != len(inner):
        raise ReaderError(
            f"##BLOCKS= says {declared.text} blocks but the file holds {len(inner)}; the file is cut short or damaged"
        )
    if not inner:
        raise ReaderError("the compound file (##DATA TYPE=LINK) holds no blocks")
    return [_read_block(b, i, opts, raise_errors=False) for i, b in enumerate(inner, start=1)]


def _read_block(block: Block, index: int, opts: _Options, *, raise_errors: bool) -> JcampBlock:
    title = block.text("TITLE")
    data_type = block.text("DATATYPE")
    try:
        spectrum, peaks = _decode_block(block, opts)
    except (ReaderError, SpectrumError) as exc:
        if raise_errors:
            if isinstance(exc, ReaderError):
                raise
            raise ReaderError(str(exc)) from None
        return JcampBlock(index, title, data_type, error=str(exc))
    return JcampBlock(index, title, data_type, spectrum=spectrum, peaks=peaks)


def _decode_block(block: Block, opts: _Options) -> tuple[Spectrum | None, PeakTable | None]:
    if block.get("NTUPLES") is not None:
        raise ReaderError("##NTUPLES= tables (multi-page or NMR data) are not read; export the spectrum as ##XYDATA=")
    if "LINK" in block.text("DATATYPE").upper():
        raise ReaderError("a compound block inside a compound block (nested ##DATA TYPE=LINK) is not read")
    notes: list[str] = []
    version = block.text("JCAMPDX")
    if version:
        notes.append(f"JCAMP-DX version {version.split()[0]}")
    xy = block.get("XYDATA")
    pts = block.get("XYPOINTS")
    peak = block.get("PEAKTABLE")
    if xy is None and pts is None and peak is None:
        raise ReaderError("the block has no ##XYDATA=, ##XYPOINTS= or ##PEAK TABLE=; it holds no spectrum")
    x_factor = _factor(block, "XFACTOR", notes)
    y_factor = _factor(block, "YFACTOR", notes)
    if xy is not None:
        form = re.sub(r"\s+", "", xy.value).upper()
        if form != "(X++(Y..Y))":
            raise ReaderError(f"##XYDATA={xy.value} (line {xy.line}) is not read; only (X++(Y..Y)) is")
        x, y_raw, form_note = _xydata(block, xy.body, xy.body_line, x_factor)
        notes.append(form_note)
    elif pts is not None:
        form = re.sub(r"\s+", "", pts.value).upper()
        if form != "(XY..XY)":
            raise ReaderError(f"##XYPOINTS={pts.value} (line {pts.line}) is not read; only (XY..XY) is")
        table = decode_pairs(pts.body_lines(), what="##XYPOINTS=")
        x, y_raw = table[:, 0] * x_factor.value, table[:, 1]
        _check_points(block, x, table[:, 1], x_factor)
        notes.append("##XYPOINTS=(XY..XY) table")
    else:
        assert peak is not None
        return None, _peak_table(block, peak.value, peak.body_lines(), x_factor, y_factor, opts, notes)
    y = y_raw * y_factor.value
    _check_first_y(block, y_raw, y_factor)
    xs, x_note = _to_cm1(block, x, opts)
    if x_note:
        notes.append(x_note)
    kind, y_note = _y_kind(block, y, opts)
    if y_note:
        notes.append(y_note)
    meta = _meta(block)
    try:
        return Spectrum.create(xs, y, kind, meta=meta, notes=notes), None
    except SpectrumError as exc:
        raise ReaderError(f"the data decode but do not make a spectrum: {exc}") from None


def _factor(block: Block, label: str, notes: list[str]) -> WrittenNumber:
    num = block.number(label)
    if num is None:
        if block.get("XYDATA") is not None or block.get("XYPOINTS") is not None:
            notes.append(f"no ##{label}=; taken as 1")
        return WrittenNumber(1.0, 0.0, "1")
    if num.value == 0 or not np.isfinite(num.value):
        raise ReaderError(f"##{label}={num.text} cannot scale the data; it must be a non-zero number")
    return num


def _required(block: Block, label: str) -> WrittenNumber:
    num = block.number(label)
    if num is None:
        raise ReaderError(f"##{label}= is missing; an ##XYDATA= table needs ##FIRSTX=, ##LASTX= and ##NPOINTS=")
    return num


def _agree(written: WrittenNumber, actual: float, extra: float = 0.0) -> bool:
    """True when ``actual`` rounds to what was written (half its last digit, plus ``extra``
    for the rounding of whatever produced ``actual``, plus 1 part in 10⁶ for single-precision
    writers)."""
    tol = 0.5 * written.unit + extra + 1e-6 * max(abs(written.value), abs(actual))
    return abs(written.value - actual) <= tol


def _xydata(
    block: Block, body: str, body_line: int, xf: WrittenNumber
) -> tuple[NDArray[np.float64], NDArray[np.float64], str]:
    table = decode_xydata(body, body_line)
    n = table.y.size
    npoints = block.number("NPOINTS")
    firstx, lastx = _required(block, "FIRSTX"), _required(block, "LASTX")
    if npoints is None:
        raise ReaderError("##NPOINTS= is missing; an ##XYDATA= table needs ##FIRSTX=, ##LASTX= and ##NPOINTS=")
    if int(npoints.value) != npoints.value or npoints.value < 2:
        raise ReaderError(f"##NPOINTS={npoints.text} is not a whole number of at least 2")
    declared_n = int(npoints.value)
    deltax = (lastx.value - firstx.value) / (declared_n - 1)
    if deltax == 0:
        raise ReaderError(f"##FIRSTX= and ##LASTX= are both {firstx.text}; the axis has no extent")
    # X check: every line's abscissa must be where the count of points before it puts it. When
    # the count disagrees with NPOINTS, say so if the data are consistent with their own count.
    bad = _first_bad_line(table, firstx, lastx, xf, declared_n)
    if bad is not None and (n == declared_n or _first_bad_line(table, firstx, lastx, xf, n) is not None):
        i, written, expected = bad
        if table.line_index[i] == 0:
            raise ReaderError(
                f"##FIRSTX= says {firstx.text} but the first data line (line {int(table.line_no[i])}) starts at "
                f"{written:.8g}; the header and the data disagree"
            )
        raise ReaderError(
            f"X check failed on line {int(table.line_no[i])}: the line starts at x = {written:.8g} but the "
            f"{int(table.line_index[i])} points before it put it at {expected:.8g} "
            "(a point is missing or extra, or ##FIRSTX=/##LASTX= are wrong)"
        )
    if n != declared_n:
        raise ReaderError(
            f"##NPOINTS= says {declared_n} points but the ##XYDATA= table holds {n}; the file is cut short or damaged"
        )
    declared = block.number("DELTAX")
    if declared is not None:
        extra = 0.5 * (firstx.unit + lastx.unit) / (declared_n - 1)
        if not _agree(declared, deltax, extra) or np.sign(declared.value) != np.sign(deltax):
            raise ReaderError(
                f"##DELTAX= says {declared.text} but ##FIRSTX=, ##LASTX= and ##NPOINTS= give {deltax:.8g}; "
                "the header contradicts itself"
            )
    x = np.linspace(firstx.value, lastx.value, n)
    form = "compressed (ASDF)" if table.compressed else "AFFN"
    checks = f", {table.y_checks} Y checks passed" if table.y_checks else ""
    return x, table.y, f"##XYDATA=(X++(Y..Y)) in {form} form, {table.line_x.size} lines, X checks passed{checks}"


def _first_bad_line(
    table: Any, firstx: WrittenNumber, lastx: WrittenNumber, xf: WrittenNumber, n: int
) -> tuple[int, float, float] | None:
    """(line, written x, expected x) of the first line whose abscissa is off, or None.

    Allowed: the rounding of the written abscissa, of XFACTOR and of FIRSTX/LASTX, and one
    part in 10⁶ (single-precision writers)."""
    deltax = (lastx.value - firstx.value) / (n - 1)
    expected = firstx.value + table.line_index * deltax
    written = table.line_x * xf.value
    tol = (0.5 * table.line_x_unit * abs(xf.value) + 0.5 * xf.unit * np.abs(table.line_x)
           + 0.5 * (firstx.unit + lastx.unit) + 1e-6 * np.abs(expected))
    bad = np.abs(written - expected) > tol
    if not bad.any():
        return None
    i = int(np.argmax(bad))
    return i, float(written[i]), float(expected[i])


def _check_points(block: Block, x: NDArray[np.float64], y_raw: NDArray[np.float64], xf: WrittenNumber) -> None:
    npoints = block.number("NPOINTS")
    if npoints is not None and int(npoints.value) != x.size:
        raise ReaderError(f"##NPOINTS= says {int(npoints.value)} points but the ##XYPOINTS= table holds {x.size}")
    for label, actual in (("FIRSTX", float(x[0])), ("LASTX", float(x[-1]))):
        num = block.number(label)
        if num is not None and not _agree(num, actual, 1e-9 * abs(actual)):
            raise ReaderError(f"##{label}= says {num.text} but the ##XYPOINTS= table gives {actual:.10g}")


def _check_first_y(block: Block, y_raw: NDArray[np.float64], yf: WrittenNumber) -> None:
    firsty = block.number("FIRSTY")
    if firsty is None:
        return
    actual = float(y_raw[0]) * yf.value
    # allowed besides FIRSTY's own rounding: the stored ordinate is a rounded multiple of YFACTOR
    # (half a YFACTOR), and YFACTOR is itself rounded (half its last digit times the ordinate)
    if not _agree(firsty, actual, 0.5 * abs(yf.value) + 0.5 * yf.unit * abs(float(y_raw[0]))):
        raise ReaderError(
            f"##FIRSTY= says {firsty.text} but the data begin with {actual:.10g} "
            f"({y_raw[0]:.10g} × ##YFACTOR={yf.text}); one of ##FIRSTY= or ##YFACTOR= is wrong"
        )


def _to_cm1(block: Block, x: NDArray[np.float64], opts: _Options) -> tuple[NDArray[np.float64], str | None]:
    written = block.text("XUNITS")
    if opts.x_unit is not None:
        unit = opts.x_unit
        said = f" (the file says {written!r})" if written else ""
        xs, conv = to_wavenumber(x, unit)
        return xs, "; ".join(n for n in (f"abscissa unit set by the caller: {x_unit_label(unit)}{said}", conv) if n)
    if not written:
        unit = guess_x_unit(x)
        xs, conv = to_wavenumber(x, unit)
        return xs, "; ".join(n for n in (f"no ##XUNITS=; judged from the range to be {x_unit_label(unit)}", conv) if n)
    xs, conv = to_wavenumber(x, parse_x_unit(written) or XUnit.wavenumber)
    return xs, conv


def _y_kind(block: Block, y: NDArray[np.float64], opts: _Options) -> tuple[YKind, str | None]:
    written = block.text("YUNITS")
    if opts.y_kind is not None:
        said = f" (the file says {written!r})" if written else ""
        return opts.y_kind, f"value kind set by the caller: {opts.y_kind.value}{said}"
    code = y_kind_from_label(written) if written else None
    if code is None:
        what = f"##YUNITS={written}" if written else "no ##YUNITS="
        raise ReaderError(
            f"{what}: cannot tell what the values are; give the value kind (e.g. absorbance, transmittance)"
        )
    if code == "A":
        return YKind.absorbance, None
    if code in ("T?", "%T"):
        kind = transmittance_scale(y)
        if code == "T?" and kind is YKind.percent_transmittance:
            return kind, f"##YUNITS={written} with values up to {float(np.max(y)):.4g}: read as percent transmittance"
        if code == "%T":
            return YKind.percent_transmittance, None
        return kind, None
    if code == "R":
        return YKind.reflectance, None
    if code == "KM":
        return YKind.kubelka_munk, None
    return YKind.absorbance, (
        f"##YUNITS={written} (log 1/R, apparent absorbance of a reflectance spectrum): read as absorbance"
    )


def _peak_table(block: Block, form_text: str, lines: list[tuple[int, str]], xf: WrittenNumber, yf: WrittenNumber,
                opts: _Options, notes: list[str]) -> PeakTable:
    form = re.sub(r"\s+", "", form_text).upper()
    groups = {"(XY..XY)": 2, "(XYW..XYW)": 3, "(XYM..XYM)": 3}
    if form not in groups:
        raise ReaderError(f"##PEAK TABLE={form_text} is not read; use (XY..XY), (XYW..XYW) or (XYM..XYM)")
    table = decode_pairs(lines, per_group=groups[form], what="##PEAK TABLE=")
    x = table[:, 0] * xf.value
    y = table[:, 1] * yf.value
    written = block.text("XUNITS")
    unit = opts.x_unit or (parse_x_unit(written) if written else guess_x_unit(x))
    xs, conv = to_wavenumber(x, unit)
    if conv:
        notes.append(conv)
    kind = opts.y_kind
    if kind is None and block.text("YUNITS"):
        code = y_kind_from_label(block.text("YUNITS"))
        kind = {"A": YKind.absorbance, "%T": YKind.percent_transmittance, "R": YKind.reflectance,
                "KM": YKind.kubelka_munk}.get(code or "")
        if code == "T?":
            kind = transmittance_scale(y)
    widths = table[:, 2] if form == "(XYW..XYW)" else [None] * len(xs)
    peaks = tuple(Peak(float(p), float(i), None if w is None else float(w)) for p, i, w in zip(xs, y, widths))
    notes.append(f"##PEAK TABLE={form_text}: {len(peaks)} peaks (a peak list, not a spectrum)")
    return PeakTable(peaks=tuple(sorted(peaks, key=lambda p: p.position_cm1)), kind=kind, meta=_meta(block),
                     notes=tuple(notes))


def _meta(block: Block) -> SpectrumMeta:
    resolution = None
    res = block.text("RESOLUTION")
    m = re.match(r"\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)", res)
    if m and float(m.group(1)) > 0:
        resolution = float(m.group(1))
    instrument = block.text("SPECTROMETERDATASYSTEM") or block.text("INSTRUMENT") or block.text("SPECTROMETER")
    return SpectrumMeta(
        title=block.text("TITLE"),
        origin=block.text("ORIGIN"),
        instrument=instrument,
        resolution_cm1=resolution,
        measured_at=_measured_at(block),
        format=FORMAT,
    )


def _measured_at(block: Block) -> datetime | None:
    long = block.text("LONGDATE")
    for text, fmts in ((long, ("%Y/%m/%d %H:%M:%S", "%Y/%m/%d %H:%M", "%Y/%m/%d", "%Y-%m-%dT%H:%M:%S", "%Y-%m-%d")),):
        if text:
            core = re.split(r"\.\d+|\s*[+-]\d{2}:?\d{2}$|\s*[A-Z]{3,4}$", text.strip())[0].strip()
            for fmt in fmts:
                try:
                    return _with_offset(datetime.strptime(core, fmt), text.strip())
                except ValueError:
                    continue
    date, time = block.text("DATE"), block.text("TIME")
    if date:
        stamp = f"{date} {time}".strip()
        for fmt in ("%y/%m/%d %H:%M:%S", "%y/%m/%d %H:%M", "%y/%m/%d", "%d/%m/%Y %H:%M:%S", "%d/%m/%Y"):
            try:
                return datetime.strptime(stamp if "%H" in fmt else date, fmt)
            except ValueError:
                continue
    return None


def _with_offset(stamp: datetime, text: str) -> datetime:
    """Attach the UTC offset written after the time (JCAMP-DX 5.01 ``##LONGDATE``: ``[+-]UUUU``, or ``UTC``/``GMT``).

    A time written without an offset stays naive: the file does not say which clock it is on.
    """
    m = re.search(r"\d\s*([+-])(\d{2}):?(\d{2})$", text)
    if m:
        minutes = int(m.group(2)) * 60 + int(m.group(3))
        return stamp.replace(tzinfo=timezone(timedelta(minutes=minutes if m.group(1) == "+" else -minutes)))
    if re.search(r"\s(UTC|GMT|Z)$", text):
        return stamp.replace(tzinfo=timezone.utc)
    return stamp
