"""Delimited text spectra (CSV, semicolon- or tab-separated, or blank-separated columns).

What real exports vary in, and how each is settled (common practice; every decision made for
the caller goes into a note on the spectrum):

* separator: tab, then semicolon, then comma, then blanks, whichever splits the data lines
  into the same number of fields;
* decimal comma: allowed when the separator is not a comma (``4000,5;0,123``);
* a header line (or several lines of text before the numbers) or none;
* ascending or descending axis (stored ascending);
* wavenumber (cm⁻¹) or wavelength (µm by range, nm only when the header or caller says so);
* the kind of value from the column header, else from the values themselves.
"""

from __future__ import annotations

import csv
import io
import re
from functools import lru_cache

import numpy as np
from numpy.typing import NDArray

from service.spectra.axis_units import (
    XUnit,
    guess_x_unit,
    guess_y_kind,
    parse_x_unit,
    parse_y_kind,
    to_wavenumber,
    transmittance_scale,
    x_unit_label,
    y_kind_from_label,
)
from service.spectra.fixed_layout import read_fixed_layout, row_shape
from service.spectra.model import Spectrum, SpectrumError, SpectrumMeta, YKind
from service.spectra.reader_errors import ReaderError

FORMAT = "delimited-text"
_NUM = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$")
_SEPARATORS = (("\t", "tab"), (";", "semicolon"), (",", "comma"), (None, "blanks"))


def _is_number(field: str) -> bool:
    return bool(_NUM.match(field.strip()))


def _split(line: str, sep: str | None) -> list[str]:
    if sep is None:
        return line.split()
    if '"' in line:
        return next(csv.reader(io.StringIO(line), delimiter=sep))
    return line.split(sep)


def _numeric_fields(fields: list[str], decimal_comma: bool) -> bool:
    fs = [f.strip() for f in fields]
    while fs and fs[-1] == "":
        fs.pop()
    if len(fs) < 2:
        return False
    if decimal_comma:
        fs = [f.replace(",", ".") for f in fs]
    return all(_is_number(f) for f in fs)


def _leading_lines(text: str, n: int) -> list[str]:
    """The first ``n`` lines that are neither blank nor ``#`` comments, without splitting the whole text."""
    out: list[str] = []
    rest = text
    while len(out) < n:
        want = n - len(out)
        parts = rest.split("\n", want)  # at most ``want`` lines, and the remainder
        more = len(parts) > want
        rest = parts.pop() if more else ""
        out += _data_like(parts)
        if not more:
            break
    return out


def _data_like(lines: list[str]) -> list[str]:
    """The lines that are neither blank nor ``#`` comments (``isspace`` is what ``strip`` strips)."""
    kept = [ln for ln in lines if ln and not ln.isspace()]
    if "#" in "".join(kept):
        kept = [ln for ln in kept if not ln.lstrip().startswith("#")]
    return kept


def sniff(text: str) -> tuple[str | None, str, bool] | None:
    """(separator, its name, decimal comma) if the text looks like columns of numbers, else None.

    Judged on the first 200 data-like lines (blank and ``#`` lines skipped), past any header block.
    """
    tail = _sample(text)
    if not tail:
        return None
    return _plain_layout(tail) or _judged_layout(tail)


def _sample(text: str) -> list[str]:
    """The lines the layout is judged on: of the first 200 data-like lines, those past any header block."""
    lines = _leading_lines(text, 200)
    return lines[len(lines) // 3:] or lines


def _plain_layout(tail: list[str]) -> tuple[str | None, str, bool] | None:
    """What :func:`_judged_layout` finds, when the lines make it plain; None when they do not.

    Plain: at least two lines, and every line the same number (two or more) of numbers, split by
    the first separator that occurs at all, with no decimal comma or quotes. Such lines pass the
    first test of the judgement below (every row numeric, every row the same width), so its
    answer is this one. One regex per distinct row shape (digits written as 0; the regex treats
    all digits alike) decides it, instead of a regex per field.
    """
    if len(tail) < 2:
        return None
    block = "\n".join(tail)
    sep, name = next((s, n) for s, n in _SEPARATORS if s is None or s in block)
    width = len([f for f in _split(tail[0], sep) if f.strip()])
    if width < 2:
        return None
    row = _row_of(sep, width)
    if not all(row.fullmatch(shape) for shape in set(row_shape(block).split("\n"))):
        return None
    return sep, name, False


def _judged_layout(tail: list[str]) -> tuple[str | None, str, bool] | None:
    for sep, name in _SEPARATORS:
        if sep is not None and not any(sep in ln for ln in tail):
            continue  # every row would be one field: cannot be columns
        for decimal_comma in ((False, True) if sep != "," else (False,)):
            rows = [_split(ln, sep) for ln in tail]
            good = [r for r in rows if _numeric_fields(r, decimal_comma)]
            if len(good) >= max(2, int(0.9 * len(rows))):
                widths = [len([f for f in r if f.strip()]) for r in good]
                common = max(set(widths), key=widths.count)
                if widths.count(common) >= 0.9 * len(widths):
                    return sep, name, decimal_comma
    return None


# _NUM with ASCII digits only, and unambiguous (the fraction needs its point), so that a regex
# over a line of many fields cannot backtrack into earlier fields at length-product cost
_ASCII_NUM = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"


@lru_cache(maxsize=64)
def _row_of(sep: str | None, width: int) -> re.Pattern[str]:
    """A line of exactly ``width`` numbers, as ``_split`` and ``_numeric_fields`` read it (with
    trailing empty fields allowed, as those drop them), blanks around fields."""
    if sep is None:
        row = rf"[ \t]*{_ASCII_NUM}(?:[ \t]+{_ASCII_NUM}){{{width - 1}}}[ \t]*"
    else:
        blank = "[ ]*" if sep == "\t" else r"[ \t]*"  # never the separator itself
        s_ = re.escape(sep)
        row = rf"{blank}{_ASCII_NUM}{blank}(?:{s_}{blank}{_ASCII_NUM}{blank}){{{width - 1}}}(?:{s_}{blank})*"
    return re.compile(row)


def read_delimited(
    text: str,
    *,
    x_unit: str | XUnit | None = None,
    y_kind: YKind | str | None = None,
    column: str | int | None = None,
) -> Spectrum:
    """Read one spectrum from delimited text.

    Parameters
    ----------
    text
        The file as text, ``\\n`` line ends, BOM removed.
    x_unit
        Override for the abscissa: ``"cm-1"``, ``"um"`` or ``"nm"``.
    y_kind
        Override for the value kind (a `YKind` or its name).
    column
        Which value column to take when the file has several (header name or 1-based index
        among the value columns); without it such a file is refused.

    Raises
    ------
    ReaderError
        Anything that keeps the text from being one spectrum, naming the line.
    """
    return read_sniffed(text, sniff(text), x_unit=x_unit, y_kind=y_kind, column=column)


def read_sniffed(
    text: str,
    found: tuple[str | None, str, bool] | None,
    *,
    x_unit: str | XUnit | None = None,
    y_kind: YKind | str | None = None,
    column: str | int | None = None,
) -> Spectrum:
    """:func:`read_delimited` for a caller that has already run :func:`sniff` on ``text``."""
    if found is None:
        raise ReaderError(
            "no columns of numbers found; delimited text needs one abscissa column and one value column "
            "separated by comma, semicolon, tab or blanks"
        )
    sep, sep_name, decimal_comma = found
    header, start, offset = _split_header(text, sep, decimal_comma)
    table, width = _parse_rows(text, start, offset, sep, decimal_comma)
    rows = table.shape[0]
    if header is not None and len(header) != width:
        header = None  # free text before the data, not column names
    notes = [f"delimited text: {rows} rows, {width} columns separated by {sep_name}"
             + (", decimal comma" if decimal_comma else "")]
    col = _choose_column(width, header, column)
    x, y = table[:, 0], table[:, col]
    if not (np.isfinite(x).all() and np.isfinite(y).all()):
        bad = int(np.flatnonzero(~(np.isfinite(x) & np.isfinite(y)))[0])
        raise ReaderError(f"data row {bad + 1} holds a value that is not a finite number")
    if width > 2:
        name = header[col] if header else f"column {col + 1}"
        notes.append(f"value column {name!r} taken of {width - 1}")
    xs, x_note = _x_axis(x, header[0] if header else "", parse_x_unit(x_unit))
    notes.append(x_note)
    if x.size > 1 and x[0] > x[-1]:
        notes.append("axis given in descending order; stored ascending")
    kind, y_note = _y_kind(y, header[col] if header else "", parse_y_kind(y_kind))
    notes.append(y_note)
    try:
        return Spectrum.create(xs, y, kind, meta=SpectrumMeta(format=FORMAT), notes=notes)
    except SpectrumError as exc:
        raise ReaderError(str(exc)) from None


def _split_header(text: str, sep: str | None, decimal_comma: bool) -> tuple[list[str] | None, int, int]:
    """(column names or None, index of the first data line, where that line starts in ``text``)."""
    header: list[str] | None = None
    offset, i = 0, 0
    while True:
        end = text.find("\n", offset)
        line = text[offset:] if end < 0 else text[offset:end]
        if line.strip() and not line.lstrip().startswith("#"):
            fields = [f.strip() for f in _split(line, sep)]
            while fields and fields[-1] == "":
                fields.pop()
            if _numeric_fields(fields, decimal_comma):
                return header, i, offset
            header = fields
        if end < 0:
            raise ReaderError("no data lines found")
        offset, i = end + 1, i + 1


def _parse_rows(
    text: str, start: int, offset: int, sep: str | None, decimal_comma: bool
) -> tuple[NDArray[np.float64], int]:
    """The data lines from line ``start`` (at ``offset`` in ``text``) on, all at once with numpy.

    Rows that share one character layout are converted column-wise (:mod:`fixed_layout`); other
    blocks are tokenised whole and converted in one call; on any irregularity, a per-line pass
    finds the line to name.
    """
    end = text.find("\n", offset)
    width = len([f for f in _split(text[offset:] if end < 0 else text[offset:end], sep) if f.strip()])
    table = read_fixed_layout(text[offset:], sep=sep, decimal_comma=decimal_comma, width=width)
    if table is None:
        table = _careful_rows(text, start, offset, sep=sep, decimal_comma=decimal_comma, width=width)
    return table, width


def _careful_rows(
    text: str, start: int, offset: int, *, sep: str | None, decimal_comma: bool, width: int
) -> NDArray[np.float64]:
    """Any data block: tokenised whole and converted in one call when it is regular, else line by line."""
    body = text[offset:]
    lines = text.split("\n")
    rest = lines[start:]
    if '"' not in body:
        if "#" in body:
            rows = [ln for ln in rest if ln.strip() and not ln.lstrip().startswith("#")]
            body = "\n".join(rows)
            n_rows = len(rows)
        else:
            n_rows = len(list(filter(None, map(str.strip, rest))))  # the non-blank lines
        if decimal_comma:
            body = body.replace(",", ".")
        if sep is not None and sep != " ":
            body = body.replace(sep, " ")
        tokens = body.split()
        if len(tokens) == width * n_rows:
            try:
                values = np.array(tokens, dtype=np.float64)
            except ValueError:
                pass
            else:
                if np.isfinite(values).all():  # 'nan' and 'inf' parse; the slow pass names their line
                    return values.reshape(n_rows, width)
    return _parse_rows_by_line(lines, start, sep, decimal_comma, width)


def _parse_rows_by_line(
    lines: list[str], start: int, sep: str | None, decimal_comma: bool, width: int
) -> NDArray[np.float64]:
    keep = [j for j in range(start, len(lines)) if lines[j].strip() and not lines[j].lstrip().startswith("#")]
    rows = [lines[j] for j in keep]
    for j, line in zip(keep, rows):
        fields = [f.strip() for f in _split(line, sep)]
        while fields and fields[-1] == "":
            fields.pop()
        if not _numeric_fields(fields, decimal_comma):
            raise ReaderError(
                f"line {j + 1} ({line.strip()[:60]!r}) is not numbers; data lines must hold only numbers"
            )
        if len(fields) != width:
            raise ReaderError(f"line {j + 1} has {len(fields)} fields but line {keep[0] + 1} has {width}")
    values = [f.strip().replace(",", ".") if decimal_comma else f.strip()
              for r in rows for f in _split(r, sep) if f.strip()]
    return np.array(values, dtype=np.float64).reshape(len(rows), width)


def _choose_column(width: int, header: list[str] | None, column: str | int | None) -> int:
    if width == 2 and column is None:
        return 1
    names = header[1:] if header else []
    if column is None:
        listed = ", ".join(repr(n) for n in names[:8]) if names else f"{width - 1} unnamed columns"
        raise ReaderError(
            f"the file holds {width - 1} value columns ({listed}); one spectrum per file is read: "
            "save one column with its axis, or choose the column"
        )
    if isinstance(column, int) or str(column).isdigit():
        i = int(column)
        if not 1 <= i <= width - 1:
            raise ReaderError(f"value column {i} does not exist; the file has {width - 1}")
        return i
    if str(column) in names:
        return names.index(str(column)) + 1
    raise ReaderError(f"no value column named {column!r}; the columns are {', '.join(repr(n) for n in names)}")


def _x_axis(x: NDArray[np.float64], head: str, override: XUnit | None) -> tuple[NDArray[np.float64], str]:
    if override is not None:
        xs, conv = to_wavenumber(x, override)
        return xs, "; ".join(n for n in (f"abscissa unit set by the caller: {x_unit_label(override)}", conv) if n)
    h = head.lower()
    unit: XUnit | None = None
    if re.search(r"µm|μm|\bum\b|micron|micromet", h):
        unit = XUnit.micrometre
    elif re.search(r"\bnm\b|nanomet", h):
        unit = XUnit.nanometre
    elif re.search(r"cm|wavenumber|1/cm", h):
        unit = XUnit.wavenumber
    elif "wavelength" in h:
        unit = XUnit.micrometre if float(np.max(x)) <= 50 else XUnit.nanometre
    if unit is not None:
        xs, conv = to_wavenumber(x, unit)
        return xs, "; ".join(n for n in (f"abscissa read as {x_unit_label(unit)} (column {head!r})", conv) if n)
    unit = guess_x_unit(x)
    xs, conv = to_wavenumber(x, unit)
    lo, hi = float(np.min(x)), float(np.max(x))
    said = f"abscissa read as {x_unit_label(unit)} from its range ({lo:g}-{hi:g}); override if wrong"
    return xs, "; ".join(n for n in (said, conv) if n)


def _y_kind(y: NDArray[np.float64], head: str, override: YKind | None) -> tuple[YKind, str]:
    if override is not None:
        return override, f"value kind set by the caller: {override.value}"
    code = y_kind_from_label(head) if head else None
    if code is None and head:
        h = head.lower()
        if "reflect" in h:
            code = "R"
        elif "%" in h or "percent" in h:
            code = "%T"
        elif "absorb" in h:
            code = "A"
        elif "transmi" in h:
            code = "T?"
        elif "kubelka" in h:
            code = "KM"
    if code == "A" or code == "logR":
        return YKind.absorbance, f"values read as absorbance (column {head!r})"
    if code == "%T":
        return YKind.percent_transmittance, f"values read as percent transmittance (column {head!r})"
    if code == "T?":
        kind = transmittance_scale(y)
        scale = "percent" if kind is YKind.percent_transmittance else "fraction"
        return kind, f"values read as transmittance ({scale}, judged from the values; column {head!r})"
    if code == "R":
        return YKind.reflectance, f"values read as reflectance (column {head!r})"
    if code == "KM":
        return YKind.kubelka_munk, f"values read as Kubelka-Munk units (column {head!r})"
    kind, why = guess_y_kind(y)
    return kind, f"value kind judged from the values: {why}; override if wrong"
