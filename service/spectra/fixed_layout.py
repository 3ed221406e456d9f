"""Rows of numbers that share one character layout, converted column-wise with numpy.

Instrument software writes every row of an export with the same format (``600.0000,0.020123``):
within a run of equally long rows the separators, signs and decimal points sit in the same
columns and only the digits change. Such a run is a 2-D byte array: one comparison proves that
every row has the first row's layout, and one matrix product adds up each number's digits.

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

import numpy as np
from numpy.typing import NDArray

MAX_DIGITS = 15  # 10**15 < 2**53: every such mantissa, and every partial sum of its digits, is exact
MAX_RUNS = 8  # beyond this many changes of row length, per-run numpy calls cost more than they save
_NL, _ZERO = 10, 48
_POW10 = 10.0 ** np.arange(MAX_DIGITS + 1)
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
    ends = np.flatnonzero(arr == _NL)
    lengths = np.diff(ends, prepend=-1)  # each row with its newline
    cuts = np.flatnonzero(lengths[1:] != lengths[:-1]) + 1
    if cuts.size >= MAX_RUNS:
        return None
    point = "," if decimal_comma else "."
    bounds = [0, *cuts.tolist(), int(ends.size)]
    parts = []
    for first, stop in zip(bounds[:-1], bounds[1:]):
        length = int(lengths[first])
        offset = int(ends[first]) + 1 - length
        rows = arr[offset:offset + (stop - first) * length].reshape(stop - first, length)
        template = raw[offset:offset + length - 1].decode("ascii")
        values = _run_values(rows, template, sep=sep, point=point, width=width)
        if values is None:
            return None
        parts.append(values)
    return parts[0] if len(parts) == 1 else np.concatenate(parts)


def _run_values(
    rows: NDArray[np.uint8], template: str, *, sep: str | None, point: str, width: int
) -> NDArray[np.float64] | None:
    """Values of a run of equally long rows that all have the layout of ``template`` (the first row)."""
    blanks = _FIELD_BLANKS if sep is None else _FIELD_BLANKS + sep
    field = _FIELD_COMMA if point == "," else _FIELD_DOT
    spans: list[tuple[int, int]] = []
    pos = 0
    n = len(template)
    while pos < n:
        if template[pos] in blanks:
            pos += 1
            continue
        end = pos
        while end < n and template[end] not in blanks:
            end += 1
        if not field.fullmatch(template, pos, end):
            return None
        spans.append((pos, end))
        pos = end
    if len(spans) != width:
        return None
    digit_cols: list[int] = []
    weights: list[tuple[int, float]] = []  # (field, weight) of each digit column
    scale = np.ones(width)  # 10 ** (digits after the decimal mark)
    negative = np.zeros(width, dtype=bool)
    for k, (a, b) in enumerate(spans):
        cols = [c for c in range(a, b) if template[c].isdigit()]
        if len(cols) > MAX_DIGITS:
            return None
        mark = template.find(point, a, b)
        scale[k] = _POW10[sum(1 for c in cols if c > mark)] if mark >= 0 else 1.0
        negative[k] = template[a] == "-"
        digit_cols += cols
        weights += [(k, _POW10[len(cols) - 1 - j]) for j in range(len(cols))]
    # the layout check: digits where the template has digits, the template's own bytes elsewhere
    t = rows[0]
    is_digit = (t >= _ZERO) & (t <= _ZERO + 9)
    low = np.where(is_digit, _ZERO, t).astype(np.uint8)
    span = np.where(is_digit, 9, 0).astype(np.uint8)
    if not (rows - low <= span).all():
        return None
    w = np.zeros((len(digit_cols), width))
    for i, (k, weight) in enumerate(weights):
        w[i, k] = weight
    digits = rows[:, digit_cols].astype(np.float64)
    digits -= _ZERO
    mantissa = digits @ w  # sums of exact integers below 2**53: exact in any order
    magnitude = mantissa / scale  # one correctly rounded division
    if not negative.any():
        return magnitude
    return np.where(negative, -magnitude, magnitude)  # the sign last, so that "-0.000" is -0.0
