"""The block-parsing delimited reader against a slow, obvious line-by-line oracle.

The reader tokenises the whole data block at once and converts it in one numpy call; the oracle
here reads one line at a time with ``csv`` and ``float`` (common practice for delimited text) and
shares no code with it. Files are synthetic (seeded random numbers) in the layouts real exports
use: separators, decimal comma, header lines, blank and ``#`` lines, trailing separators, quoted
fields, CRLF line ends.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from service.spectra import ReaderError, read_spectrum


def oracle_rows(text: str, sep: str | None, decimal_comma: bool) -> list[tuple[int, list[float]]]:
    """(1-based line number, values) of every data line, header lines skipped, one line at a time."""
    out: list[tuple[int, list[float]]] = []
    started = False
    for no, line in enumerate(text.replace("\r\n", "\n").split("\n"), start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        fields = line.split() if sep is None else next(csv.reader(io.StringIO(line), delimiter=sep))
        fields = [f.strip() for f in fields]
        while fields and fields[-1] == "":
            fields.pop()
        try:
            values = [float(f.replace(",", ".") if decimal_comma else f) for f in fields if f]
        except ValueError:
            if started:
                out.append((no, []))  # a bad data line
            continue  # a header line
        started = True
        out.append((no, values))
    return out


def make_file(rng: np.random.Generator, *, sep: str, decimal_comma: bool, header: bool, blank: bool,
              comment: bool, trailing: bool, quoted: bool, crlf: bool) -> tuple[str, np.ndarray, np.ndarray]:
    x = np.round(np.linspace(4000.0, 650.0, int(rng.integers(50, 400))), 3)
    y = np.round(rng.uniform(0.01, 1.2, x.size), 6)
    lines = ["# synthetic spectrum (test data)"] if comment else []
    if header:
        lines.append(f"wavenumber{sep}absorbance")
    for i, (a, b) in enumerate(zip(x, y)):
        fa, fb = f"{a:.3f}", f"{b:.6f}"
        if decimal_comma:
            fa, fb = fa.replace(".", ","), fb.replace(".", ",")
        if quoted and i % 7 == 3:
            fb = f'"{fb}"'
        lines.append(fa + sep + fb + (sep if trailing and i % 5 == 0 else ""))
        if blank and i % 37 == 5:
            lines.append("   ")
        if comment and i % 53 == 7:
            lines.append("# a note between the rows")
    eol = "\r\n" if crlf else "\n"
    return eol.join(lines) + eol, x, y


LAYOUTS = [(",", False), (";", False), (";", True), ("\t", False), ("\t", True), (" ", False)]


@pytest.mark.parametrize("seed", range(24))
def test_reader_matches_line_by_line_oracle(seed: int) -> None:
    rng = np.random.default_rng(seed)
    sep, dc = LAYOUTS[seed % len(LAYOUTS)]
    flags = {k: bool(rng.integers(0, 2)) for k in ("header", "blank", "comment", "trailing", "quoted", "crlf")}
    if sep == " ":
        flags["quoted"] = flags["trailing"] = False
    text, x, y = make_file(rng, sep=sep, decimal_comma=dc, **flags)
    s = read_spectrum(text.encode())
    rows = oracle_rows(text, None if sep == " " else sep, dc)
    table = np.array([v for _, v in rows])
    order = np.argsort(table[:, 0])
    np.testing.assert_array_equal(s.x, table[order, 0])
    np.testing.assert_array_equal(s.y, table[order, 1])
    np.testing.assert_array_equal(s.y, y[::-1])  # and the numbers written


@pytest.mark.parametrize(("bad", "sep"), [("abc", ","), ("1.0,2.0,3.0", ","), ("nan", ","), ("1,0;x", ";")])
def test_a_bad_line_is_named_as_the_oracle_finds_it(bad: str, sep: str) -> None:
    rng = np.random.default_rng(7)
    text, _x, _y = make_file(rng, sep=sep, decimal_comma=False, header=True, blank=True, comment=False,
                             trailing=False, quoted=False, crlf=False)
    lines = text.split("\n")
    k = len(lines) * 2 // 3
    lines[k] = bad if bad != "nan" else lines[k].split(sep)[0] + sep + "nan"
    text = "\n".join(lines)
    with pytest.raises(ReaderError) as err:
        read_spectrum(text.encode())
    assert f"line {k + 1} " in err.value.message
