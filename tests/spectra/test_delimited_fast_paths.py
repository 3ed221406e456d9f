"""The shortcuts of the delimited reader against its careful path and against a slow, obvious parser.

Two shortcuts serve the common file (one separator, every row written with one format):
``_plain_layout`` settles the separator with one regex per row shape, and ``read_fixed_layout``
converts rows that share a character layout column-wise. Each may only ever give the answer the
careful path gives (``_judged_layout``; ``_careful_rows``): the same separator, the same float
bits, the same error message. Here that is checked on generated files, many of which must fall
back (quotes, decimal comma, ragged rows, text in the middle, NaN, blank and ``#`` lines,
semicolons, tabs, CRLF, BOM, exponents, numbers too long for the exact conversion).

The outside reference is ``float`` itself: Python converts decimal text to the nearest double
(correct rounding, IEEE 754; common practice), so a value that differs from ``float(field)`` in
any bit is wrong. Files are synthetic (seeded random numbers), in layouts real exports use
(common practice).
"""

from __future__ import annotations

import csv
import re

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.spectra import ReaderError, Spectrum, YKind, decode_text, read_spectrum
from service.spectra import delimited
from service.spectra.fixed_layout import read_fixed_layout

# ------------------------------------------------------------------ the slow, obvious versions


def obvious_leading_lines(text: str, n: int) -> list[str]:
    return [ln for ln in text.split("\n") if ln.strip() and not ln.lstrip().startswith("#")][:n]


def obvious_header(text: str, sep: str | None, decimal_comma: bool) -> tuple[list[str] | None, int, int]:
    """(header fields, index of the first data line, its offset), one line at a time."""
    header = None
    lines = text.split("\n")
    for i, line in enumerate(lines):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        fields = [f.strip() for f in (line.split() if sep is None else next(csv.reader([line], delimiter=sep)))]
        while fields and fields[-1] == "":
            fields.pop()
        if len(fields) >= 2 and all(_is_plain_number(f.replace(",", ".") if decimal_comma else f) for f in fields):
            return header, i, len("\n".join(lines[:i])) + (1 if i else 0)
        header = fields
    raise AssertionError("no data line")


def _is_plain_number(f: str) -> bool:
    return re.fullmatch(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?", f) is not None


def float_rows(text: str, sep: str | None, decimal_comma: bool) -> list[list[float]]:
    """Every data line's fields through ``float``, header lines skipped (the reference values)."""
    rows: list[list[float]] = []
    for line in text.split("\n"):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        fields = [f.strip().strip('"') for f in (line.split() if sep is None else line.split(sep))]
        fields = [f.replace(",", ".") if decimal_comma else f for f in fields if f]
        try:
            rows.append([float(f) for f in fields])
        except ValueError:
            if rows:
                raise
    return rows


def bits(a: np.ndarray) -> bytes:
    return np.ascontiguousarray(a, dtype=np.float64).tobytes()


# ------------------------------------------------------------------ the comparison


def assert_as_careful(text: str) -> tuple[str | None, str, bool] | None:
    """Every shortcut on ``text`` gives what the careful path gives; returns the layout found."""
    assert delimited._leading_lines(text, 200) == obvious_leading_lines(text, 200)
    sample = delimited._sample(text)
    found = delimited.sniff(text)
    assert found == (delimited._judged_layout(sample) if sample else None)
    if found is None:
        return None
    sep, _name, dc = found
    header, start, offset = delimited._split_header(text, sep, dc)
    assert (header, start, offset) == obvious_header(text, sep, dc)
    fast: np.ndarray | str
    careful: np.ndarray | str
    try:
        fast, width = delimited._parse_rows(text, start, offset, sep, dc)
    except ReaderError as exc:
        fast = exc.message
    try:
        first = text[offset:].split("\n", 1)[0]
        width = len([f for f in delimited._split(first, sep) if f.strip()])
        careful = delimited._careful_rows(text, start, offset, sep=sep, decimal_comma=dc, width=width)
    except ReaderError as exc:
        careful = exc.message
    if isinstance(careful, str) or isinstance(fast, str):
        assert fast == careful
    else:
        assert fast.shape == careful.shape and bits(fast) == bits(careful)
    return found


# ------------------------------------------------------------------ generated files

SEPARATORS = [",", ";", "\t", " ", "  ", " \t"]
BENIGN = ["blank line", "blank-looking line", "comment", "quotes", "trailing separator", "padding", "exponent",
          "seventeen digits", "plus sign", "leading zeros", "negative", "non-ASCII comment"]
BAD = ["ragged", "text in the middle", "nan", "one field"]
ODD = ["empty field", "doubled separators"]  # read or refused as the careful path decides; not checked end to end


@st.composite
def delimited_files(draw: st.DrawFn) -> tuple[bytes, dict[str, object]]:
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    n = draw(st.one_of(st.integers(16, 60), st.integers(180, 260)))
    width = draw(st.sampled_from([2, 2, 2, 3]))
    sep = draw(st.sampled_from(SEPARATORS))
    dc = sep.strip() != "," and draw(st.booleans())
    x_dec = draw(st.integers(0, 6))
    y_fmt = draw(st.sampled_from(["{:.%df}" % d for d in range(0, 9)] + ["{:g}", "{!r}", "{:.4e}", "{:12.6f}"]))
    flaws = draw(st.sets(st.sampled_from(BENIGN + BAD + ODD), max_size=3))
    header = draw(st.sampled_from([None, "wavenumber{s}absorbance", "Wavenumber (cm-1){s}A{s}B",
                                   "exported by a synthetic test\nsample: invented\nx{s}y"]))
    eol = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    bom = draw(st.booleans())
    final_eol = draw(st.booleans())
    descending = draw(st.booleans())

    step = int(rng.integers(1, 40))
    xi = int(rng.integers(400, 1200)) * 10**x_dec + step * np.arange(n)
    xs = [f"{v / 10**x_dec:.{x_dec}f}" for v in (xi[::-1] if descending else xi)]
    scale = 100.0 if "negative" not in flaws else 1.0
    ys = rng.uniform(-0.01 if "negative" in flaws else 0.0, 1.5, (n, width - 1)) * scale / 100.0
    rows = []
    for i in range(n):
        fields = [xs[i]] + [y_fmt.format(float(v)) for v in ys[i]]
        if "exponent" in flaws and i % 5 == 2:
            fields[-1] = f"{float(ys[i, -1]):.3e}"
        if "seventeen digits" in flaws and i % 7 == 1:
            fields[-1] = repr(float(ys[i, -1]) + 0.1234567890123)
        if "plus sign" in flaws and i % 3 == 0 and not fields[-1].lstrip().startswith("-"):
            fields[-1] = "+" + fields[-1].lstrip()
        if "leading zeros" in flaws:
            fields[0] = "00" + fields[0]
        if "padding" in flaws:
            fields = [f.rjust(14) for f in fields]
        if dc:
            fields = [f.replace(".", ",") for f in fields]
        if "quotes" in flaws and i % 6 == 3 and sep in ",;\t" and "padding" not in flaws:  # csv quoting
            fields[-1] = f'"{fields[-1]}"'
        rows.append(sep.join(fields) + (sep.strip() or sep if "trailing separator" in flaws and i % 4 == 0 else ""))
    k = int(rng.integers(1, n))
    first_field = rows[k].split(sep.strip() or None)[0]
    if "ragged" in flaws:
        rows[k] += sep + "0.5"
    if "text in the middle" in flaws:
        rows[k] = "end of block"
    if "nan" in flaws:
        rows[k] = first_field + sep + "nan"
    if "one field" in flaws:
        rows[k] = first_field
    if "empty field" in flaws:
        rows[k] = first_field + sep + sep + rows[k][len(first_field) + len(sep):]
    if "doubled separators" in flaws:
        rows = [r.replace(sep, sep + sep) for r in rows]
    if "blank line" in flaws:
        rows.insert(int(rng.integers(1, n)), "")
    if "blank-looking line" in flaws:
        rows.insert(int(rng.integers(1, n)), " \t ")
    if "comment" in flaws:
        rows.insert(int(rng.integers(1, n)), "# a note between the rows")
    if "non-ASCII comment" in flaws:
        rows.insert(int(rng.integers(1, n)), "# measured at 25 µm aperture (synthetic)")
    lines = ([header.replace("{s}", sep.strip() or sep)] if header else []) + rows
    text = eol.join(lines) + (eol if final_eol else "")
    data = (b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8")
    return data, {"n": n, "width": width, "sep": sep, "dc": dc, "flaws": flaws}


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(delimited_files())
def test_shortcuts_answer_as_the_careful_path(case: tuple[bytes, dict[str, object]]) -> None:
    data, info = case
    text = decode_text(data)
    found = assert_as_careful(text)
    flaws = info["flaws"]
    assert isinstance(flaws, set)
    if found is None:
        return
    sep, _name, dc = found
    if dc != info["dc"]:
        # the judgement's 90 % rule can take a few rows with a decimal comma for noise; the careful
        # path then refuses the file (as before the shortcuts, and checked equal above)
        return
    if info["width"] == 2 and not flaws & set(BAD + ODD):
        # a clean two-column file reads, and its values are float() of its fields, bit for bit
        s = read_spectrum(data, x_unit="cm-1", y_kind="absorbance")
        table = np.array(float_rows(text, sep, dc))
        order = np.argsort(table[:, 0], kind="stable")
        assert bits(s.x) == bits(table[order, 0]) and bits(s.y) == bits(table[order, 1])
    elif flaws & {"text in the middle", "nan", "one field"}:
        with pytest.raises(ReaderError):
            read_spectrum(data, x_unit="cm-1", y_kind="absorbance")


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.text(alphabet="0123456789.,;\t -+eE#\"x\u00b5", max_size=24), min_size=1, max_size=40))
def test_shortcuts_answer_as_the_careful_path_on_random_text(lines: list[str]) -> None:
    assert_as_careful("\n".join(lines))


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 2), st.integers(0, 10**15 - 1), st.integers(0, 15), st.booleans()),
                min_size=1, max_size=30))
def test_fixed_layout_values_are_float_bit_for_bit(cols: list[tuple[int, int, int, bool]]) -> None:
    """Mantissas up to 15 digits, up to 15 of them after the decimal mark, any sign: one layout, 40 rows
    that differ only in their digits; every value must be float(field) exactly (signed zeros too)."""
    rng = np.random.default_rng(len(cols))
    width = len(cols) + 1
    rows, expect = [], []
    for _r in range(40):
        fields = [f"{int(rng.integers(1000, 9999))}.5"]
        for sign, mantissa, decimals, zero in cols:
            digits = str(0 if zero else int(rng.integers(0, mantissa + 1))).zfill(15)
            text = digits[:15 - decimals] + ("." + digits[15 - decimals:] if decimals else "")
            fields.append(("", "-", "+")[sign] + text)
        rows.append(",".join(fields))
        expect.append([float(f) for f in fields])
    got = read_fixed_layout("\n".join(rows) + "\n", sep=",", decimal_comma=False, width=width)
    assert got is not None, "one layout: the shortcut must take it"
    assert bits(got) == bits(np.array(expect))
    assert (np.signbit(got) == np.signbit(np.array(expect))).all()


@pytest.mark.parametrize("point", ["none", "inside", "in front"])
@pytest.mark.parametrize("digits", [1, 6, 7, 8, 9, 15])
def test_fixed_layout_is_exact_either_side_of_the_single_precision_bound(digits: int, point: str) -> None:
    """Fields of up to 7 digits are summed in float32, longer ones in float64: on both sides of that
    bound the largest mantissa (all nines), the smallest and random ones give float(field) bit for bit."""
    rng = np.random.default_rng(digits)
    mantissas = [10**digits - 1, 0, 1, 10 ** (digits - 1)] + [int(rng.integers(0, 10**digits)) for _ in range(60)]
    after = {"none": 0, "inside": digits // 2, "in front": digits}[point]
    rows, expect = [], []
    for i, m in enumerate(mantissas):
        text = str(m).zfill(digits)
        field = text[:digits - after] + ("." + text[digits - after:] if after else "")
        rows.append(f"{1000 + i}.5,{field},-{field}")
        expect.append([float(f"{1000 + i}.5"), float(field), float(f"-{field}")])
    got = read_fixed_layout("\n".join(rows) + "\n", sep=",", decimal_comma=False, width=3)
    assert got is not None, "one layout: the shortcut must take it"
    assert bits(got) == bits(np.array(expect))
    assert (np.signbit(got) == np.signbit(np.array(expect))).all()


def test_a_run_too_long_to_keep_its_tiled_layout_reads_the_same() -> None:
    """Runs above MAX_TILED_BYTES are compared against a layout tiled for them alone (not remembered);
    the values are float(field) bit for bit there too, and the run still ends at the first row of another layout."""
    from service.spectra.fixed_layout import MAX_TILED_BYTES

    rng = np.random.default_rng(5)
    n = MAX_TILED_BYTES // 19 + 500
    rows = [f"{1000 + i * 0.1:.4f},{v:.6f}" for i, v in enumerate(rng.uniform(0, 1, n))]
    rows[-7] = "12345.678,0.500000"  # as long, another layout (the point moved): the run ends there
    assert len(rows[0]) + 1 == 19 and 19 * (n - 7) > MAX_TILED_BYTES
    got = read_fixed_layout("\n".join(rows) + "\n", sep=",", decimal_comma=False, width=2)
    assert got is not None
    assert bits(got) == bits(np.array([[float(f) for f in r.split(",")] for r in rows]))


@pytest.mark.parametrize(
    ("rows", "sep", "dc"),
    [
        (["600.0000,0.020123", "600.9447,0.020456", "1000.1234,1.234567"], ",", False),  # two runs
        (["4000,5;0,123", "3999,5;0,456"], ";", True),
        (["  4000.5\t 0.123", "  3999.5\t 0.456"], "\t", False),
        (["4000.5   -0.123", "3999.5   +0.456"], None, False),  # two runs of one length
    ],
)
def test_common_layouts_take_the_shortcut(rows: list[str], sep: str | None, dc: bool) -> None:
    """The shortcut is for the common export (common practice: one format for every row)."""
    rows = [r for r in rows for _ in range(8)]
    block = "\n".join(rows) + "\n"
    got = read_fixed_layout(block, sep=sep, decimal_comma=dc, width=2)
    assert got is not None
    expect = [[float(f.replace(",", ".") if dc else f) for f in (r.split() if sep is None else r.split(sep))]
              for r in rows]
    assert bits(got) == bits(np.array(expect))


@pytest.mark.parametrize(
    "rows",
    [
        ["600.0,1.5e-3", "601.0,1.6e-3"],  # exponents
        ["600.0,0.1234567890123456", "601.0,0.2234567890123456"],  # 16 digits: not exact by one division
        ['600.0,"0.5"', '601.0,"0.6"'],  # quotes
        ["600.0,0.5", "# note", "601.0,0.6"],  # comment
        ["600.0,0.5", "", "601.0,0.6"],  # blank line
        ["600.0,0.5", "601.0,nan"],  # not a plain number
        ["600.0,0.5", "601.0,0.6,7"],  # ragged
        ["600.0,0.5", "601.0,0.6"] + [f"{700 + i}.{'0' * i},0.5" for i in range(12)],  # many row lengths
    ],
)
def test_unusual_blocks_are_left_to_the_careful_path(rows: list[str]) -> None:
    assert read_fixed_layout("\n".join(rows) + "\n", sep=",", decimal_comma=False, width=2) is None


@pytest.mark.parametrize(
    "row",
    ["1.0\t\t2.0", "1.0 \t\t2.0", "1.0\t 2.0 ", "1.0 ,2.0", "1.0,,2.0", "1.0,2.0,,", "1.0;2.0;", " 1.0  2.0 ",
     "1.0\t2.0\t", "1,0;2,0", "1.0;2,0", "+1.;-.5", "1e3,2E-3", "1.0,2.0 3.0", "1.0\x0c,2.0", "\u0661.0,2.0"],
)
def test_sniff_of_edge_rows_answers_as_the_judgement(row: str) -> None:
    """Empty fields between separators, blanks beside them, trailing separators, decimal commas,
    other whitespace and non-ASCII digits: the shortcut either agrees or stays out of the way."""
    assert_as_careful("\n".join([row] * 30))
    assert_as_careful("\n".join(["1.0,2.0"] * 20 + [row] * 10))


def test_bench_file_takes_both_shortcuts() -> None:
    from service.bench._http_scenario import ESTER, spectrum_csv

    text = decode_text(spectrum_csv(ESTER))
    assert delimited._plain_layout(delimited._sample(text)) == (",", "comma", False)
    body = text.split("\n", 1)[1]
    assert read_fixed_layout(body, sep=",", decimal_comma=False, width=2) is not None
    assert_as_careful(text)


def test_many_long_fields_before_a_bad_character_do_not_make_the_sniff_backtrack() -> None:
    """An unambiguous number pattern: a failing line costs its length, not a product of field lengths."""
    line = ",".join(["1" * 30] * 20) + "x"
    text = "\n".join([line] * 150)
    assert delimited._plain_layout(delimited._sample(text)) is None
    assert_as_careful(text)


# ------------------------------------------------------------------ the Spectrum's sort


def obvious_sorted(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    order = np.argsort(x, kind="stable")
    return x[order], y[order]


@settings(max_examples=100, deadline=None)
@given(st.integers(16, 200), st.sampled_from(["ascending", "descending", "shuffled"]), st.integers(0, 2**32 - 1))
def test_spectrum_axis_sorted_as_a_stable_sort_would(n: int, order: str, seed: int) -> None:
    """Spectrum.create skips the sort for axes already in order; the result is the sort's, bit for bit."""
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(400, 4000, n))
    y = rng.normal(size=n)
    if order == "descending":
        x, y = x[::-1].copy(), y[::-1].copy()
    elif order == "shuffled":
        p = rng.permutation(n)
        x, y = x[p], y[p]
    s = Spectrum.create(x, y, YKind.absorbance)
    xs, ys = obvious_sorted(x, y)
    assert bits(s.x) == bits(xs) and bits(s.y) == bits(ys)
    assert not s.x.flags.writeable and not s.y.flags.writeable
