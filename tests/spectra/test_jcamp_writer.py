"""JCAMP-DX writer: round trips in every form, checked by our reader, by a slow oracle written from
the standard (tests/spectra/jcamp_oracle.py), and by the `jcamp` package from PyPI (1.3.2) as a
second, independent reader.

Where jcamp 1.3.2 cannot read a file that follows the standard, the test says so and checks that
form against the oracle instead (its behaviour is not copied):
* SQZ+DUP: it looks back for a DIF character to repeat and fails (IndexError), as it does on the
  real IUPAC file sqzdupd1.jdx;
* DUP counts of two or more digits (``T9`` = 29 repeats): it reads only the first digit, as on the
  real IUPAC file dupinc2.jdx (it ends with 3731 of its 3734 points);
* a DOS end-of-file mark (fixinc2.jdx, xyinc1.jdx) and a comment after ##YFACTOR= (jtpolys.jdx).
"""

from __future__ import annotations

import contextlib
import io
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from jcamp_oracle import decode as oracle_decode
from jcamp_oracle import xydata_lines

from service.spectra import Spectrum, SpectrumMeta, YKind, read_spectrum, write_jcamp
from service.spectra.jcamp_writer import FORMS, choose_y_factor

DATA = Path(__file__).resolve().parents[1] / "data" / "jcamp"


def make_spectrum(*, n: int = 600, x0: float = 600.0, dx: float = 2.0, seed: int = 1,
                  kind: YKind = YKind.absorbance, flat: int = 0) -> Spectrum:
    """A seeded synthetic spectrum (invented): bands on a baseline, noise, optionally a flat run."""
    rng = np.random.default_rng(seed)
    x = x0 + dx * np.arange(n)
    y = 0.05 + rng.normal(0, 0.002, n)
    for c, w, h in ((x0 + 0.3 * dx * n, 8 * dx, 0.8), (x0 + 0.7 * dx * n, 20 * dx, 0.4)):
        y = y + h * np.exp(-0.5 * ((x - c) / w) ** 2)
    if flat:
        y[10:10 + flat] = y[10]
    if kind is YKind.percent_transmittance:
        y = 100 * 10 ** -y
    elif kind is YKind.transmittance:
        y = 10 ** -y
    return Spectrum.create(x, y, kind, meta=SpectrumMeta(title="synthetic (invented)", origin="tests"))


def _jcamp_read(text: str) -> tuple[np.ndarray, np.ndarray]:
    import jcamp

    with contextlib.redirect_stdout(io.StringIO()):
        d = jcamp.read(io.BytesIO(text.encode()))
    x, y = np.asarray(d["x"], dtype=float), np.asarray(d["y"], dtype=float)
    order = np.argsort(x)
    return x[order], y[order]


@pytest.mark.parametrize("form", FORMS)
def test_round_trip_reproduces_the_data_within_half_a_y_factor(form: str) -> None:
    s = make_spectrum(flat=7)
    text = write_jcamp(s, form=form)
    back = read_spectrum(text.encode())
    half = choose_y_factor(s.y) / 2
    assert back.kind is s.kind and back.n_points == s.n_points
    np.testing.assert_allclose(back.x, s.x, rtol=1e-12)
    assert np.max(np.abs(back.y - s.y)) <= half * (1 + 1e-9)


@pytest.mark.parametrize("form", FORMS)
def test_written_lines_follow_the_standard_per_the_oracle(form: str) -> None:
    """Oracle: character-by-character decoder from the standard; lines at most 80 characters."""
    s = make_spectrum(flat=25)  # a run long enough for a two-digit DUP count
    text = write_jcamp(s, form=form)
    lines = xydata_lines(text)
    assert max(len(ln) for ln in lines) <= 80
    ys, _, _ = oracle_decode(lines)
    yf = choose_y_factor(s.y)
    assert np.max(np.abs(np.array(ys) * yf - s.y)) <= yf / 2 * (1 + 1e-9)
    if form in ("dif", "difdup"):
        assert any(c in text for c in "JKLMNOPQRjklmnopqr%")


@pytest.mark.parametrize("form", ["affn", "pac", "sqz", "dif", "difdup"])
def test_jcamp_package_reads_our_files_to_the_same_values(form: str) -> None:
    """Second, independent reader: jcamp 1.3.2 (PyPI). The flat run of 7 points gives a one-digit
    DUP count, which it reads; SQZ+DUP is left out (it fails on that form, see the module doc)."""
    s = make_spectrum(flat=7, kind=YKind.percent_transmittance)
    text = write_jcamp(s, form=form)
    if form == "difdup":
        assert any(c in text.split("##XYDATA")[1] for c in "STUVWXYZs")
    jx, jy = _jcamp_read(text)
    ours = read_spectrum(text.encode())
    np.testing.assert_allclose(jx, ours.x, rtol=1e-12)
    np.testing.assert_allclose(jy, ours.y, rtol=0, atol=1e-9)


@pytest.mark.parametrize("name", ["fixinc1", "fixdec1", "dupdec1", "dupdec2", "pacdec1"])
def test_jcamp_package_agrees_with_us_on_real_files_it_can_read(name: str) -> None:
    """IUPAC public-domain test files (tests/data/jcamp): AFFN, DIFDUP and PAC forms."""
    data = (DATA / f"{name}.jdx").read_bytes()
    jx, jy = _jcamp_read(data.decode("latin-1"))
    ours = read_spectrum(data)
    np.testing.assert_allclose(jx, ours.x, rtol=1e-12)
    np.testing.assert_allclose(jy, ours.y, rtol=1e-12)


def test_unevenly_spaced_spectrum_is_written_as_xypoints() -> None:
    x = 1e4 / np.linspace(2.5, 25, 200)  # from a wavelength axis
    s = Spectrum.create(x, np.linspace(0.1, 0.9, 200), YKind.absorbance)
    text = write_jcamp(s, form="difdup")
    assert "##XYPOINTS=(XY..XY)" in text
    back = read_spectrum(text.encode())
    np.testing.assert_array_equal(back.x, s.x)
    assert np.max(np.abs(back.y - s.y)) <= choose_y_factor(s.y) / 2 * (1 + 1e-9)


def test_metadata_is_written_and_read_back() -> None:
    from datetime import datetime

    s = make_spectrum()
    s = Spectrum.create(s.x, s.y, s.kind, meta=SpectrumMeta(
        title="lot 42 $$ not a comment", origin="QC lab", instrument="FT-IR 1", resolution_cm1=4.0,
        measured_at=datetime(2026, 12, 1, 9, 30, 0)))
    back = read_spectrum(write_jcamp(s).encode())
    assert back.meta.title == "lot 42 $ $ not a comment"
    assert (back.meta.origin, back.meta.instrument, back.meta.resolution_cm1) == ("QC lab", "FT-IR 1", 4.0)
    assert back.meta.measured_at == datetime(2026, 12, 1, 9, 30, 0)
    from datetime import timedelta, timezone

    cet = datetime(2026, 12, 1, 9, 30, 0, tzinfo=timezone(timedelta(hours=1)))
    text = write_jcamp(Spectrum.create(s.x, s.y, s.kind, meta=SpectrumMeta(measured_at=cet)))
    assert "##LONGDATE=2026/12/01 09:30:00 +0100" in text  # JCAMP-DX 5.01 [+-]UUUU
    assert read_spectrum(text.encode()).meta.measured_at == cet


# -- property: any generated spectrum written and read again round-trips ---------------------------

_KINDS = {
    YKind.absorbance: (-0.5, 4.0),
    YKind.transmittance: (0.0, 1.2),
    YKind.percent_transmittance: (2.0, 110.0),
    YKind.reflectance: (0.0, 100.0),
    YKind.kubelka_munk: (0.0, 50.0),
}


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    n=st.integers(16, 400),
    x0=st.floats(50.0, 5000.0),
    dx=st.floats(0.05, 10.0),
    descending_source=st.booleans(),
    kind=st.sampled_from(list(_KINDS)),
    seed=st.integers(0, 2**32 - 1),
    scale_exp=st.integers(-3, 0),
    flat=st.integers(0, 40),
    form=st.sampled_from(FORMS),
)
def test_any_generated_spectrum_round_trips(n: int, x0: float, dx: float, descending_source: bool, kind: YKind,
                                            seed: int, scale_exp: int, flat: int, form: str) -> None:
    rng = np.random.default_rng(seed)
    lo, hi = _KINDS[kind]
    span = (hi - lo) * (10.0 ** scale_exp if kind in (YKind.absorbance, YKind.kubelka_munk) else 1.0)
    y = lo + rng.uniform(0, span, n) if kind is not YKind.percent_transmittance else rng.uniform(lo, hi, n)
    if flat:
        k = min(flat, n - 1)
        y[:k] = y[0]
    x = x0 + dx * np.arange(n)
    if descending_source:
        x, y = x[::-1], y[::-1]
    s = Spectrum.create(x, y, kind)
    back = read_spectrum(write_jcamp(s, form=form).encode())
    assert back.kind is s.kind
    assert back.n_points == s.n_points
    np.testing.assert_allclose(back.x, s.x, rtol=1e-11, atol=1e-9)
    assert np.max(np.abs(back.y - s.y)) <= choose_y_factor(s.y) / 2 * (1 + 1e-9) + 1e-300
