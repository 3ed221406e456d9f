"""Spectrum files: reading a 3,600-point JCAMP-DX file in DIFDUP form, ours beside the `jcamp`
package (PyPI, the reference reader) on the same bytes in the same run; plus AFFN, CSV and writing.

Data are generated (seeded): a synthetic absorbance spectrum, 401-4000 cm⁻¹ at 1 cm⁻¹ (3,600
points), 14 bands, a sloping baseline and noise, written by our own writer. Before timing, the
setup checks that the reference reader decodes the file to the same values as ours, so the two
figures time the same work.
"""

from __future__ import annotations

import contextlib
import io
from typing import Any

import numpy as np

from service.bench import BenchCase, BenchReport, BenchResult

N_POINTS = 3600
_BANDS = ((3350, 250, 0.35), (3060, 12, 0.12), (2925, 25, 0.6), (2855, 18, 0.4), (2230, 10, 0.2),
          (1715, 20, 0.9), (1601, 8, 0.3), (1490, 10, 0.35), (1450, 15, 0.3), (1375, 12, 0.25),
          (1250, 30, 0.5), (1100, 25, 0.55), (1028, 10, 0.3), (750, 12, 0.45))
OURS = "read 3,600-point DIFDUP JCAMP-DX (read_spectrum)"
REFERENCE = "read the same file (jcamp 1.3.2 reference reader)"


def synthetic_spectrum() -> Any:
    from service.spectra import Spectrum, SpectrumMeta, YKind

    rng = np.random.default_rng(20261202)
    x = np.linspace(401.0, 4000.0, N_POINTS)
    y = 0.03 + 2e-5 * (x - 400) + rng.normal(0, 0.0008, N_POINTS)
    for c, w, h in _BANDS:
        y = y + h * np.exp(-4 * np.log(2) * ((x - c) / w) ** 2)
    return Spectrum.create(x, y, YKind.absorbance, meta=SpectrumMeta(title="synthetic bench spectrum (invented)"))


def _file(form: str) -> bytes:
    from service.spectra import write_jcamp

    return write_jcamp(synthetic_spectrum(), form=form).encode("ascii")


def _csv() -> bytes:
    s = synthetic_spectrum()
    rows = "\n".join(f"{a:.4f},{b:.6f}" for a, b in zip(s.x[::-1], s.y[::-1]))
    return ("wavenumber (cm-1),absorbance\n" + rows + "\n").encode()


def _read(data: bytes) -> Any:
    from service.spectra import read_spectrum

    return read_spectrum(data)


def _jcamp_available() -> bool:
    try:
        import jcamp  # noqa: F401
    except ImportError:
        return False
    return True


def _reference_setup() -> bytes:
    data = _file("difdup")
    ours = _read(data)
    theirs = _jcamp_read(data)
    order = np.argsort(theirs["x"])
    if len(theirs["y"]) != ours.n_points or not np.allclose(np.asarray(theirs["y"])[order], ours.y, atol=1e-9):
        raise RuntimeError("the reference reader decodes the bench file differently; the timing would be unfair")
    return data


def _jcamp_read(data: bytes) -> dict[str, Any]:
    import jcamp

    with contextlib.redirect_stdout(io.StringIO()):  # it prints its own check messages
        return jcamp.read(io.BytesIO(data))  # type: ignore[no-any-return]


def cases() -> list[BenchCase | BenchReport]:
    from service.spectra import write_jcamp

    out: list[BenchCase | BenchReport] = [
        BenchCase(OURS, _read, setup=lambda: _file("difdup"), repeats=60, aim="≥ 10× faster than the reference"),
    ]
    if _jcamp_available():
        out.append(BenchCase(REFERENCE, _jcamp_read, setup=_reference_setup, repeats=15))
    else:
        out.append(BenchReport(REFERENCE, {"skipped": "the jcamp package is not installed (pip install '.[test]')"}))
    out += [
        BenchCase("read 3,600-point AFFN JCAMP-DX", _read, setup=lambda: _file("affn"), repeats=30),
        BenchCase("read 3,600-point CSV (descending, header)", _read, setup=_csv, repeats=30),
        BenchCase("write 3,600-point DIFDUP JCAMP-DX", lambda s: write_jcamp(s, form="difdup"),
                  setup=synthetic_spectrum, repeats=10),
    ]
    return out


def derived(results: dict[str, BenchResult]) -> list[dict[str, Any]]:
    ours, ref = results.get(OURS), results.get(REFERENCE)
    if ours is None or ref is None or ours.median_ms <= 0:
        return []
    return [{
        "name": "DIFDUP read speed-up over the reference reader (median / median)",
        "ratio": round(ref.median_ms / ours.median_ms, 1),
        "ours_median_ms": round(ours.median_ms, 3),
        "reference_median_ms": round(ref.median_ms, 3),
        # on a busy machine a short call is disturbed more often than a long one; the 10th
        # percentiles compare the least disturbed runs of each
        "ratio_p10": round(ref.p10_ms / ours.p10_ms, 1) if ours.p10_ms > 0 else None,
        "aim": "≥ 10",
    }]
