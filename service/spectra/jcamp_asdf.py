"""Decoding of JCAMP-DX ``(X++(Y..Y))`` data lines in AFFN and every ASDF form, vectorised.

The compression rules are those of the IUPAC JCAMP-DX standard (McDonald & Wilks, Appl.
Spectrosc. 42 (1988) 151, section 5.4; unchanged in 5.01):

* AFFN: numbers separated by spaces or commas; PAC: the sign itself separates (``+10-3``);
* SQZ: the first digit and the sign are one character, ``@ A-I`` = 0..9, ``a-i`` = -1..-9;
* DIF: a difference from the previous ordinate, ``% J-R`` = 0..9, ``j-r`` = -1..-9;
* DUP: ``S-Z s`` = 1..9: the previous token occurs this many times in all;
* Y check: when a line ends in DIF form, the next line starts with that same ordinate again,
  written absolutely; it is checked, then dropped.

The whole table is decoded as one byte array with numpy (classify every byte, find token
starts, add up digit values per token), so the cost per point is a few numpy element
operations, not a Python loop. Lines that hold exponents (``1.5E-3``) take a regex path.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from service.spectra.reader_errors import ReaderError

# One translate table gives every byte a code: its class, plus 16 when it makes the number
# negative ('-', a-i, j-r). A second gives the digit a byte carries, plus one (0 = none).
# bytes.translate runs at memory speed, so classification costs two passes over the text.
_DIGIT, _DOT, _SEP, _NL, _SIGN, _SQZ, _DIF, _DUP, _BAD = 0, 1, 2, 3, 4, 5, 6, 7, 31
_NEG = 16
_code = bytearray([_BAD]) * 256
_dv = bytearray(256)
for _c in b"0123456789":
    _code[_c], _dv[_c] = _DIGIT, _c - 47
_code[ord(".")] = _DOT
for _c in b" \t,":
    _code[_c] = _SEP
_code[ord("\n")] = _NL
_code[ord("+")] = _SIGN
_code[ord("-")] = _SIGN | _NEG
for _i, _c in enumerate(b"@ABCDEFGHI"):
    _code[_c], _dv[_c] = _SQZ, _i + 1
for _i, _c in enumerate(b"abcdefghi", start=1):
    _code[_c], _dv[_c] = _SQZ | _NEG, _i + 1
for _i, _c in enumerate(b"%JKLMNOPQR"):
    _code[_c], _dv[_c] = _DIF, _i + 1
for _i, _c in enumerate(b"jklmnopqr", start=1):
    _code[_c], _dv[_c] = _DIF | _NEG, _i + 1
for _i, _c in enumerate(b"STUVWXYZs", start=1):
    _code[_c], _dv[_c] = _DUP, _i + 1
_CODE_T, _DV_T = bytes(_code), bytes(_dv)
_SIGN_OF = np.where(np.arange(256) & _NEG, -1.0, 1.0)  # by code: the sign a token's first byte gives
_POW10 = 10.0 ** np.arange(0, 40)
# weight of a digit byte, indexed by power * 11 + (digit + 1)
_WEIGHT = (np.arange(11)[None, :] - 1.0).clip(0) * _POW10[:, None]
_WEIGHT = _WEIGHT.ravel()
MAX_POINTS = 2_000_000
_COMMENT = re.compile(r"\$\$[^\n]*")
_LEADING_WS = re.compile(r"\n[ \t,]+")
_DOT_BYTE, _ZERO, _NINE = ord("."), ord("0"), ord("9")
_AFTER = np.arange(1, 20)  # more digits than this after a dot fail the 17-digit check anyway

_NON_E_ASDF = re.compile(r"[@A-DF-Ia-df-i%J-Rj-rS-Zs]")
_AFFN_EXP = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


@dataclass(frozen=True)
class DecodedTable:
    """Ordinates of an ``(X++(Y..Y))`` table before any factor, with what each line said of X.

    ``line_x`` is the abscissa written at the start of each data line (file units, before
    XFACTOR), ``line_index`` the index of the point it belongs to, ``line_no`` the file line,
    ``line_x_unit`` the size of the last digit written for that abscissa.
    """

    y: NDArray[np.float64]
    line_x: NDArray[np.float64]
    line_x_unit: NDArray[np.float64]
    line_index: NDArray[np.int64]
    line_no: NDArray[np.int64]
    compressed: bool
    y_checks: int


def _uses_exponents(text: str) -> bool:
    """AFFN with exponents, e.g. ``4.4E+03 1.2E-1``. An ``E`` is read as a SQZ digit (+5) when
    the table also holds any other ASDF character, or when it is not between a digit and a
    digit or sign."""
    if "E" not in text and "e" not in text:
        return False
    if _NON_E_ASDF.search(text):
        return False
    return not _AFFN_EXP.sub(" ", text).strip(" \t\n,;")


def decode_xydata(body: str, first_line: int) -> DecodedTable:
    """Decode the data lines of an ``(X++(Y..Y))`` table.

    Parameters
    ----------
    body
        The text after the ``##XYDATA=`` line up to the next record, ``\\n`` line ends.
    first_line
        File line number of the first line of ``body`` (for messages).

    Raises
    ------
    ReaderError
        An unknown character, a malformed number, a DUP or DIF token with nothing to act on,
        or a failed Y check, each naming the file line.
    """
    text = body.lstrip(" \t,")
    if not text.endswith("\n"):
        text += "\n"
    try:
        return _decode(text, first_line, cleaned=False)
    except _NeedsCleaning:
        # comments out, and leading blanks off every line (keeping the line count), so that the
        # token right after a newline is the line's abscissa
        text = _LEADING_WS.sub("\n", _COMMENT.sub("", text)).lstrip(" \t,")
        return _decode(text, first_line, cleaned=True)


class _NeedsCleaning(Exception):
    """The table holds comments or indented lines: clean the text and decode again."""


def _decode(text: str, first_line: int, *, cleaned: bool) -> DecodedTable:
    if not text.strip(" \t,\n"):
        raise ReaderError(f"##XYDATA= (before line {first_line}) holds no data lines")
    if _uses_exponents(text):
        return _decode_affn_exponent(text, first_line)
    try:
        raw = text.encode("ascii")
    except UnicodeEncodeError:
        bad = next(i for i, ch in enumerate(text) if ord(ch) > 127)
        raise ReaderError(
            f"character {text[bad]!r} in the data on line {first_line + text.count(chr(10), 0, bad)}; "
            "data lines hold only ASCII"
        ) from None
    # Decimal points are taken out first (keeping, per dot, how many digits follow it), so the
    # digits of every token are contiguous and each digit's power of ten is its distance to the
    # token's last digit.
    dot_new_pos = dot_decimals = None
    if b"." in raw:
        dot_new_pos, dot_decimals = _take_out_dots(raw, first_line)
        raw = raw.replace(b".", b"")

    def line_no(pos: int) -> int:  # file line of a byte of the dot-free text
        return first_line + raw.count(b"\n", 0, pos)

    code = np.frombuffer(raw.translate(_CODE_T), dtype=np.uint8)
    nl = code == _NL
    nl_pos = np.flatnonzero(nl)
    if not cleaned and (b"$$" in raw or (code[nl_pos[:-1] + 1] == _SEP).any()):
        raise _NeedsCleaning
    if code.max() == _BAD:
        pos = int(np.argmax(code == _BAD))
        ch = chr(raw[pos])
        hint = " ('?' marks a missing value, which a spectrum for identity testing may not have)" if ch == "?" else ""
        raise ReaderError(f"character {ch!r} in the data on line {line_no(pos)} is not allowed{hint}")
    # a token starts at a sign or pseudo-digit, or at a digit that follows a separator
    is_num = code == _DIGIT
    starts_mask = code >= _SIGN
    starts_mask[0] |= is_num[0]
    starts_mask[1:] |= is_num[1:] & ((code[:-1] == _SEP) | nl[:-1])
    starts = np.flatnonzero(starts_mask)
    n_tok = starts.size
    tok_of = np.cumsum(starts_mask)
    tok_of -= 1
    dv = np.frombuffer(raw.translate(_DV_T), dtype=np.uint8)
    dpos = np.flatnonzero(dv)
    dtok = tok_of[dpos]
    ends = np.empty(dtok.size, dtype=bool)
    ends[-1] = True
    np.not_equal(dtok[1:], dtok[:-1], out=ends[:-1])
    last_i = np.flatnonzero(ends)  # each token's last digit
    if last_i.size != n_tok:
        have = np.zeros(n_tok, dtype=bool)
        have[dtok] = True
        raise ReaderError(f"a sign without digits on line {line_no(int(starts[int(np.argmin(have))]))}")
    power = dpos[last_i][dtok]
    power -= dpos
    if power[0 if power.size == 1 else np.argmax(power)] > 17:
        t = int(dtok[np.argmax(power > 17)])
        raise ReaderError(f"a number with more than 17 digits on line {line_no(int(starts[t]))}")
    power *= 11
    power += dv[dpos]
    value = np.bincount(dtok, weights=_WEIGHT[power], minlength=n_tok)
    decimals = None
    if dot_new_pos is not None and dot_new_pos.size:
        dot_tok = tok_of[dot_new_pos]
        if dot_tok.size > 1 and (np.diff(dot_tok) == 0).any():
            t = int(dot_tok[np.argmax(np.diff(dot_tok) == 0)])
            raise ReaderError(f"a number with two decimal points on line {line_no(int(starts[t]))}")
        decimals = np.zeros(n_tok, dtype=np.int64)
        decimals[dot_tok] = dot_decimals
    start_code = code[starts]
    value *= _SIGN_OF[start_code]
    start_cls = start_code & 15
    if decimals is not None:
        value /= _POW10[decimals]

    # lines: the token right after a newline opens a line (its X)
    first_of_line = np.empty(n_tok, dtype=bool)
    first_of_line[0] = True
    first_of_line[1:] = nl[starts[1:] - 1]
    x_tok = np.flatnonzero(first_of_line)
    line_nos = first_line + np.searchsorted(nl_pos, starts[x_tok])
    if (start_cls[x_tok] > _SIGN).any():
        i = int(np.argmax(start_cls[x_tok] > _SIGN))
        raise ReaderError(f"line {int(line_nos[i])} does not start with a plain abscissa (X value)")
    line_x = value[x_tok]
    line_x_unit = 1.0 / _POW10[decimals[x_tok]] if decimals is not None else np.ones(x_tok.size)
    compressed = bool((start_cls > _SIGN).any())

    # ordinate tokens, and for each line its first one
    if first_of_line[-1] or (first_of_line[1:] & first_of_line[:-1]).any():
        k = int(np.argmax(np.append(first_of_line[1:] & first_of_line[:-1], True)))
        raise ReaderError(f"line {line_no(int(starts[k]))} has an abscissa but no ordinates")
    yi = np.flatnonzero(~first_of_line)
    yv = value[yi]
    ycls = start_cls[yi]
    first_y_tok = first_of_line[yi - 1]
    fy_tok = np.flatnonzero(first_y_tok)
    is_dup = ycls == _DUP
    if is_dup.any():
        dup_i = np.flatnonzero(is_dup)
        counts_at = yv[dup_i]
        prev = dup_i - 1
        bad = first_y_tok[dup_i] | (counts_at < 1) | (counts_at != np.floor(counts_at)) | is_dup[prev]
        if bad.any():
            pos = int(starts[yi[dup_i[int(np.argmax(bad))]]])
            raise ReaderError(
                f"a repeat count (DUP) with nothing to repeat or not a whole number on line {line_no(pos)}"
            )
        counts = np.ones(yv.size, dtype=np.int64)
        counts[prev] = counts_at.astype(np.int64)
        counts[dup_i] = 0
        if int(counts.sum()) > MAX_POINTS:
            raise ReaderError(f"repeat counts (DUP) expand the table beyond {MAX_POINTS} points; the data are damaged")
        rep = np.repeat(np.arange(yv.size), counts)
        fy = (np.cumsum(counts) - counts)[fy_tok]
        yv = yv[rep]
        is_dif = ycls[rep] == _DIF
    else:
        fy = fy_tok
        is_dif = ycls == _DIF
    if is_dif[0]:
        raise ReaderError(f"the first ordinate (line {first_line}) is a difference (DIF) with nothing before it")
    if is_dif.any():
        absolute = ~is_dif
        csum = np.cumsum(yv)
        base = csum[absolute] - yv[absolute]
        grp = np.cumsum(absolute)
        grp -= 1
        y = csum - base[grp]
    else:
        y = yv
    # Y check: where the previous line ended in DIF form, the line's first ordinate repeats it
    check = np.zeros(fy.size, dtype=bool)
    check[1:] = is_dif[fy[1:] - 1]
    n_checks = int(check.sum())
    if n_checks:
        ci = fy[check]
        if is_dif[ci].any():
            k = int(np.flatnonzero(check)[int(np.argmax(is_dif[ci]))])
            raise ReaderError(
                f"Y check missing on line {int(line_nos[k])}: the line before ended in difference form, so this "
                "line must start by repeating its last ordinate as an absolute value"
            )
        mism = np.abs(y[ci] - y[ci - 1]) > 1e-9 * np.maximum(np.abs(y[ci]), 1.0)
        if mism.any():
            j = int(np.argmax(mism))
            k = int(np.flatnonzero(check)[j])
            raise ReaderError(
                f"Y check failed on line {int(line_nos[k])}: it repeats the ordinate as {y[ci[j]]:.10g} but "
                f"the line before ends at {y[ci[j] - 1]:.10g}; the compressed data are damaged"
            )
        y = np.delete(y, ci)
        line_index = fy - np.cumsum(check)
    else:
        line_index = fy
    return DecodedTable(
        y=y,
        line_x=line_x,
        line_x_unit=line_x_unit,
        line_index=line_index.astype(np.int64),
        line_no=line_nos.astype(np.int64),
        compressed=compressed,
        y_checks=n_checks,
    )


def _take_out_dots(raw: bytes, first_line: int) -> tuple[NDArray[np.int64], NDArray[np.int64]]:
    """For each decimal point followed by digits: its position once the dots are removed, and
    how many digits follow it. A dot with no digit on either side is an error."""
    b = np.frombuffer(raw + b" " * _AFTER.size, dtype=np.uint8)
    dots = np.flatnonzero(b == _DOT_BYTE)
    window = b[dots[:, None] + _AFTER]  # the bytes after each dot (dots are few: look, don't scan)
    digit = (window >= _ZERO) & (window <= _NINE)
    following = np.where(digit.all(axis=1), _AFTER.size, np.argmin(digit, axis=1))
    before = b[np.maximum(dots - 1, 0)]
    bare = (following == 0) & ((before < _ZERO) | (before > _NINE) | (dots == 0))
    if bare.any() or b".." in raw:
        pos = int(dots[np.argmax(bare)]) if bare.any() else raw.find(b"..")
        line = first_line + raw.count(b"\n", 0, pos)
        raise ReaderError(f"a decimal point without digits, or two in a row, on line {line}")
    new_pos = dots - np.arange(dots.size)
    has = following > 0
    return new_pos[has], following[has]


def _decode_affn_exponent(text: str, first_line: int) -> DecodedTable:
    """AFFN lines whose numbers carry exponents: tokenised by regex, converted by numpy."""
    ys: list[str] = []
    xs: list[float] = []
    units: list[float] = []
    idx: list[int] = []
    nos: list[int] = []
    for i, t in enumerate(text.split("\n")):
        if not t.strip():
            continue
        no = first_line + i
        toks = _AFFN_EXP.findall(t)
        if len(toks) < 2:
            raise ReaderError(f"line {no} has an abscissa but no ordinates")
        xs.append(float(toks[0]))
        units.append(_unit_of(toks[0]))
        idx.append(len(ys))
        nos.append(no)
        ys.extend(toks[1:])
    return DecodedTable(
        y=np.array(ys, dtype=np.float64),
        line_x=np.array(xs),
        line_x_unit=np.array(units),
        line_index=np.array(idx, dtype=np.int64),
        line_no=np.array(nos, dtype=np.int64),
        compressed=False,
        y_checks=0,
    )


def _unit_of(tok: str) -> float:
    m = re.fullmatch(r"[+-]?(\d*)\.?(\d*)(?:[eE]([+-]?\d+))?", tok)
    if not m:
        return 1.0
    return 10.0 ** ((int(m.group(3)) if m.group(3) else 0) - len(m.group(2)))


def decode_pairs(
    lines: list[tuple[int, str]], *, per_group: int = 2, what: str = "##XYPOINTS="
) -> NDArray[np.float64]:
    """``(XY..XY)`` style tables (also ``XYW``/``XYM`` peak tables): groups separated by ``;``
    or spaces, values by ``,`` or spaces. Returns an array of shape (n, per_group)."""
    values: list[str] = []
    for no, t in lines:
        body = t.replace(";", " ")
        toks = _AFFN_EXP.findall(body)
        rest = _AFFN_EXP.sub(" ", body).replace(",", " ").strip()
        if rest:
            hint = " ('?' marks a missing value)" if "?" in rest else ""
            raise ReaderError(f"unreadable text {rest.split()[0]!r} in {what} on line {no}{hint}")
        if len(toks) % per_group:
            raise ReaderError(
                f"line {no} of {what} holds {len(toks)} numbers, not whole groups of {per_group}; the table is damaged"
            )
        values.extend(toks)
    if not values:
        raise ReaderError(f"{what} holds no values")
    return np.array(values, dtype=np.float64).reshape(-1, per_group)


