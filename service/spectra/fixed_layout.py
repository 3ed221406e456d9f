"""Rows of numbers that share one character layout, converted column-wise with numpy.

Instrument software writes every row of an export with the same format (``600.0000,0.020123``):
within a run of equally long rows the separators, signs and decimal points sit in the same
columns and only the digits change. Such a run is a 2-D byte array: one comparison proves that
every row has the first row's layout, and one matrix product adds up each number's digits. The
comparison runs flat, against the layout repeated for the run's rows (remembered per layout and
row count: an instrument sends files of one length); the product runs in single precision when no
field has more than 7 digits, where every product and partial sum is a whole number below 2²⁴
and so exact, as it is in double precision up to 15 digits.

The values are exactly those of ``float`` on each field (bit for bit). A mantissa of at most 15
digits is an exact double, and so is every power of ten up to 10²²; the quotient of two exact
doubles is correctly rounded (IEEE 754 division), and a correctly rounded decimal conversion
(Python's ``float``) has only that one result. This is the exact case of decimal-to-binary
conversion described by Clinger (How to read floating point numbers accurately, PLDI 1990).

Anything unusual (exponents, quotes, comments, blank lines, non-ASCII text, numbers of more than
15 digits, rows of many different lengths) gives None, and the caller takes its general path,
which also finds and names any bad line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from numpy.typing import NDArray

MAX_DIGITS = 15  # 10**15 < 2**53: every such mantissa, and every partial sum of its digits, is exact
MAX_SINGLE_DIGITS = 7  # 10**7 < 2**24: such fields are summed in float32, exactly as in float64
MAX_TILED_BYTES = 256 * 1024  # runs up to this size keep their tiled layout (16 at most: <= 8 MiB)
MAX_RUNS = 8  # beyond this many runs of equally long rows, per-run numpy calls cost more than they save
_NL, _ZERO = 10, 48
_POW10 = 10.0 ** np.arange(MAX_DIGITS + 1)
_TO_ZERO = str.maketrans("123456789", "000000000")
_FIELD_BLANKS = " \t"
# a number as float() reads it, without an exponent, ASCII digits only, with either decimal mark
_FIELD_DOT = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)")
_FIELD_COMMA = re.compile(r"[+-]?(?:[0-9]+,?[0-9]*|,[0-9]+)")


def read_fixed_layout(block: str, *, sep: str | None, decimal_comma: bool, width: int) -> NDArray[np.float64] | None:
    """The rows of ``block`` as an (n rows, ``width``) array, or None when they do not share a layout.

    Parameters
    ----------
    block
        The data lines, ``\\n`` line ends, from the first data line to the end of the file.
    sep
        The field separator (None: runs of blanks).
    decimal_comma
        Whether ``,`` is the decimal mark.
    width
        The number of fields every row must hold.
    """
    if not block.isascii() or '"' in block or "#" in block:
        return None
    raw = block.rstrip("\n").encode("ascii") + b"\n"
    arr = np.frombuffer(raw, dtype=np.uint8)
    parts = []
    start = 0
    while start < len(raw):
        if len(parts) == MAX_RUNS:
            return None
        length = raw.index(b"\n", start) + 1 - start  # of the run's first row, with its newline
        # rows go on as long as a newline closes each after the same length; the layout check
        # below proves that they are rows (no newline inside, digits and separators in place)
        closed = arr[start + length - 1::length] == _NL
        n = int(closed.size if closed.all() else np.argmin(closed))
        template = raw[start:start + length - 1].decode("ascii")
        layout = _layout(row_shape(template), sep=sep, point="," if decimal_comma else ".", width=width)
        if layout is None:
            return None
        low, span = _tiled(layout, n) if n * length <= MAX_TILED_BYTES else layout.tiled(n)
        # uint8: a digit's value where a digit goes, 0 elsewhere in a row that fits
        digits = arr[start:start + n * length] - low
        fits = digits <= span
        if not fits.all():  # the run ends at the first row of another layout (e.g. another sign)
            n = int(np.argmin(fits)) // length
            digits = digits[:n * length]
        parts.append(layout.values(digits.reshape(n, length)))
        start += n * length
    # (rows, fields), each field's column contiguous
    return (parts[0] if len(parts) == 1 else np.concatenate(parts, axis=1)).T


def row_shape(text: str) -> str:
    """The text with every ASCII digit written as 0: rows of one layout have one shape."""
    return text.translate(_TO_ZERO)


@dataclass(frozen=True, eq=False)
class _Layout:
    """One row layout: what each byte column may hold, and how its digits make the fields."""

    low: NDArray[np.uint8]  # per byte column: '0' where a digit goes, else the byte itself
    span: NDArray[np.uint8]  # 9 where a digit goes, else 0
    weights: NDArray[np.float32] | NDArray[np.float64]  # (fields, byte columns): each digit's place value
    scale: NDArray[np.float64]  # (fields, 1): 10 ** (digits after the decimal mark)
    negative: tuple[int, ...]  # the fields written with a minus sign

    def tiled(self, rows: int) -> tuple[NDArray[np.uint8], NDArray[np.uint8]]:
        """``low`` and ``span`` repeated for ``rows`` rows, flat: compared with the bytes of a run in one
        contiguous pass (a comparison broadcast along rows of ~20 bytes runs about ten times slower)."""
        return np.tile(self.low, rows), np.tile(self.span, rows)

    def values(self, digits: NDArray[np.uint8]) -> NDArray[np.float64]:
        """(fields, rows) from rows of digit values (``rows - low`` of rows that fit): field by field,
        so that each step runs along a whole column."""
        # digits times place values: every product and partial sum is a whole number below the
        # field's 10 ** digits, exact in any order (float32 up to 7 digits, < 2**24; float64 up to 15)
        out = (self.weights @ digits.astype(self.weights.dtype).T).astype(np.float64, copy=False)
        out /= self.scale  # one correctly rounded division
        for k in self.negative:
            np.negative(out[k], out=out[k])  # the sign last, so that "-0.000" is -0.0
        return out


@lru_cache(maxsize=16)
def _tiled(layout: _Layout, rows: int) -> tuple[NDArray[np.uint8], NDArray[np.uint8]]:
    """:meth:`_Layout.tiled`, remembered (read-only) for runs up to ``MAX_TILED_BYTES``: one instrument
    writes every file with the same rows, so a stream of its uploads builds them once."""
    low, span = layout.tiled(rows)
    low.setflags(write=False)
    span.setflags(write=False)
    return low, span


@lru_cache(maxsize=256)
def _layout(shape: str, *, sep: str | None, point: str, width: int) -> _Layout | None:
    """The layout of rows like ``shape`` (a row with every digit written as 0); None if its fields
    are not ``width`` plain numbers of at most 15 digits."""
    blanks = _FIELD_BLANKS if sep is None else _FIELD_BLANKS + sep
    field = _FIELD_COMMA if point == "," else _FIELD_DOT
    spans: list[tuple[int, int]] = []
    pos, n = 0, len(shape)
    while pos < n:
        if shape[pos] in blanks:
            pos += 1
            continue
        end = pos
        while end < n and shape[end] not in blanks:
            end += 1
        if not field.fullmatch(shape, pos, end):
            return None
        spans.append((pos, end))
        pos = end
    if len(spans) != width:
        return None
    weights = np.zeros((width, n + 1))  # the last byte column is the newline
    scale = np.ones((width, 1))
    most = 0
    for k, (a, b) in enumerate(spans):
        cols = [c for c in range(a, b) if shape[c] == "0"]
        if len(cols) > MAX_DIGITS:
            return None
        most = max(most, len(cols))
        mark = shape.find(point, a, b)
        scale[k] = _POW10[sum(1 for c in cols if c > mark)] if mark >= 0 else 1.0
        weights[k, cols] = _POW10[len(cols) - 1::-1]
    row = np.frombuffer(shape.encode("ascii") + b"\n", dtype=np.uint8)
    digit = row == _ZERO
    layout = _Layout(
        low=np.where(digit, _ZERO, row).astype(np.uint8),
        span=np.where(digit, 9, 0).astype(np.uint8),
        # single precision holds every whole number below 2**24: fields of up to 7 digits
        weights=weights.astype(np.float32) if most <= MAX_SINGLE_DIGITS else weights,
        scale=scale,
        negative=tuple(k for k, (a, _b) in enumerate(spans) if shape[a] == "-"),
    )
    for a in (layout.low, layout.span, layout.weights, layout.scale):
        a.setflags(write=False)  # shared by every file of this layout (the cache)
    return layout
