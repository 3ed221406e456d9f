"""Delimited text spectra: separators, decimal comma, headers, axis order and unit, value kind.

The decisions follow common practice for instrument exports; wavelength to wavenumber is the
definition ν̃ = 10⁴/λ[µm] = 10⁷/λ[nm]. Spectra here are synthetic (invented).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from service.spectra import ReaderError, YKind, read_delimited, read_spectrum

SHARED = Path(__file__).resolve().parents[2].parent / "shared" / "data"


def absorbance_curve(x: np.ndarray) -> np.ndarray:
    return 0.05 + 0.9 * np.exp(-0.5 * ((x - 1700) / 15) ** 2) + 0.4 * np.exp(-0.5 * ((x - 2900) / 40) ** 2)


X = np.linspace(4000, 400, 1801)  # descending, as most exports
A = absorbance_curve(X)


def table(xs: np.ndarray, ys: np.ndarray, *, sep: str = ",", decimal: str = ".", header: str | None = None,
          eol: str = "\n", fmt: str = "{:.4f}") -> bytes:
    rows = [f"{a:.4f}{sep}{fmt.format(b)}".replace(".", decimal) if decimal != "." else f"{a:.4f}{sep}{fmt.format(b)}"
            for a, b in zip(xs, ys)]
    if decimal != ".":
        rows = [f"{a:.4f}".replace(".", decimal) + sep + fmt.format(b).replace(".", decimal) for a, b in zip(xs, ys)]
    lines = ([header] if header else []) + rows
    return (eol.join(lines) + eol).encode("utf-8")


@pytest.mark.parametrize(
    ("sep", "decimal", "name"),
    [(",", ".", "comma"), (";", ".", "semicolon"), ("\t", ".", "tab"), (";", ",", "semicolon"), ("\t", ",", "tab"),
     (" ", ".", "blanks"), ("  ", ",", "blanks")],
)
def test_separators_and_decimal_comma(sep: str, decimal: str, name: str) -> None:
    s = read_spectrum(table(X, A, sep=sep, decimal=decimal, header=None))
    assert s.n_points == X.size
    np.testing.assert_allclose(s.y, A[::-1], atol=5e-5)
    assert name in s.notes[0]
    assert ("decimal comma" in s.notes[0]) == (decimal == ",")


def test_excel_bom_crlf_and_header_are_fine() -> None:
    data = b"\xef\xbb\xbf" + table(X, A, sep=";", decimal=",", header="Wavenumber (cm-1);Absorbance", eol="\r\n")
    s = read_spectrum(data)
    assert s.kind is YKind.absorbance and s.range_cm1 == (400.0, 4000.0)
    assert any("column 'Absorbance'" in n for n in s.notes)


def test_ascending_and_descending_axes_give_the_same_spectrum() -> None:
    down = read_spectrum(table(X, A))
    up = read_spectrum(table(X[::-1], A[::-1]))
    np.testing.assert_array_equal(down.x, up.x)
    np.testing.assert_array_equal(down.y, up.y)
    assert any("descending" in n for n in down.notes)


def test_wavelength_in_micrometres_is_detected_from_the_range_and_noted() -> None:
    """Mid-IR 2.5-25 µm; ν̃ = 10⁴ / λ (definition)."""
    um = 1e4 / X
    s = read_spectrum(table(um, A, header=None))
    assert s.range_cm1 == pytest.approx((400.0, 4000.0), rel=1e-6)
    assert any("wavelength in µm from its range" in n for n in s.notes)


def test_wavelength_in_nanometres_needs_the_header_or_the_caller() -> None:
    nm = 1e7 / X
    s = read_spectrum(table(nm, A, header="wavelength (nm),absorbance"))
    assert s.range_cm1 == pytest.approx((400.0, 4000.0), rel=1e-6)
    plain = table(nm, A)
    assert read_spectrum(plain).range_cm1[1] == pytest.approx(25000.0)  # read as cm⁻¹ without a hint
    s2 = read_spectrum(plain, x_unit="nm")
    assert s2.range_cm1 == pytest.approx((400.0, 4000.0), rel=1e-6)
    assert any("set by the caller" in n for n in s2.notes)


def test_the_caller_can_override_a_wrong_guess() -> None:
    s = read_spectrum(table(X, A), x_unit="cm-1", y_kind="absorbance")
    assert any("set by the caller" in n for n in s.notes)


@pytest.mark.parametrize(
    ("values", "header", "kind"),
    [
        (100 * 10 ** -A, None, YKind.percent_transmittance),
        (10 ** -A, None, YKind.transmittance),
        (A, None, YKind.absorbance),
        (100 * 10 ** -A, "wavenumber,%T", YKind.percent_transmittance),
        (10 ** -A, "wavenumber,Transmittance", YKind.transmittance),
        (100 * 10 ** -A, "wavenumber,Transmittance", YKind.percent_transmittance),
        (A, "cm-1,Abs", YKind.absorbance),
        (A, "cm-1,Kubelka-Munk", YKind.kubelka_munk),
    ],
)
def test_value_kind_from_header_or_values(values: np.ndarray, header: str | None, kind: YKind) -> None:
    s = read_spectrum(table(X, values, header=header, fmt="{:.6f}"))
    assert s.kind is kind


def test_values_that_fit_no_kind_are_refused_with_the_fix() -> None:
    odd = np.linspace(-50, 800, X.size)
    with pytest.raises(ReaderError, match="give the value kind explicitly"):
        read_spectrum(table(X, odd))
    assert read_spectrum(table(X, odd), y_kind="reflectance").kind is YKind.reflectance


def test_several_value_columns_are_refused_unless_one_is_chosen() -> None:
    text = "wavenumber,lot1,lot2\n" + "".join(f"{a:.1f},{b:.4f},{b * 2:.4f}\n" for a, b in zip(X, A))
    with pytest.raises(ReaderError, match=r"2 value columns \('lot1', 'lot2'\)"):
        read_spectrum(text.encode())
    s = read_delimited(text, column="lot2")
    np.testing.assert_allclose(s.y, 2 * A[::-1], atol=1e-4)
    assert read_delimited(text, column=1).y[0] == pytest.approx(A[-1], abs=1e-4)


@pytest.mark.parametrize(
    ("text", "pattern"),
    [
        ("x,y\n" + "1000,0.1\n" * 3 + "end of data\n" + "1001,0.2\n" * 20, r"line 5 \('end of data'\) is not numbers"),
        ("x,y\n" + "".join(f"{1000 + i},0.{i + 1}\n" for i in range(20)) + "1030,0.5,7\n", r"line 22 has 3 fields"),
        ("x,y\n" + "".join(f"{1000 + i},{0.1 + i / 100}\n" for i in range(20)) + "1020,nan\n", r"not numbers"),
        ("1000,0.1\n1000,0.2\n" + "".join(f"{1001 + i},0.{i + 1}\n" for i in range(20)), r"repeats the value 1000"),
    ],
)
def test_damaged_tables_are_refused_naming_the_line(text: str, pattern: str) -> None:
    with pytest.raises(ReaderError, match=pattern):
        read_spectrum(text.encode())


def test_real_atr_export_column_is_read() -> None:
    """Real ATR spectra, PlotFTIR (Natural Resources Canada) via ../shared/data (GPL-3, read in place,
    not copied): a wide CSV of absorbance columns; one chosen column reads as absorbance over 650-4000."""
    path = SHARED / "real-atr-five-materials.csv"
    if not path.exists():
        pytest.skip("../shared/data is not present on this machine")
    text = path.read_text(encoding="utf-8")
    with pytest.raises(ReaderError, match="value columns"):
        read_spectrum(text.encode())
    s = read_delimited(text, column=1)
    lo, hi = s.range_cm1
    assert lo == pytest.approx(650, abs=2) and hi == pytest.approx(4000, abs=2)
    assert s.kind is YKind.absorbance
