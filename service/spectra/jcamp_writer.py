"""JCAMP-DX writer: a Spectrum as an IUPAC JCAMP-DX 4.24 infrared file.

Evenly spaced spectra are written as ``##XYDATA=(X++(Y..Y))`` in the chosen form (AFFN,
PAC, SQZ, DIF, SQZ+DUP or DIF+DUP, as defined in McDonald & Wilks, Appl. Spectrosc. 42
(1988) 151, section 5.4), with a Y check at the start of every line in the DIF forms.
Unevenly spaced spectra (e.g. converted from wavelength) are written as
``##XYPOINTS=(XY..XY)``, which the standard allows only in AFFN.

Ordinates are stored as integers times ``##YFACTOR``; the factor is chosen so the largest
value has 8 significant digits, and a file read back reproduces every value within half a
YFACTOR. The axis is written ascending, FIRSTX/LASTX/DELTAX with full float precision.
"""

from __future__ import annotations

import math
from collections.abc import Iterator

import numpy as np

from service.spectra.model import Spectrum, YKind

FORMS = ("affn", "pac", "sqz", "dif", "sqzdup", "difdup")
_SQZ_POS = "@ABCDEFGHI"
_SQZ_NEG = "@abcdefghi"
_DIF_POS = "%JKLMNOPQR"
_DIF_NEG = "%jklmnopqr"
_DUP = "?STUVWXYZs"
_YUNITS = {
    YKind.absorbance: "ABSORBANCE",
    YKind.transmittance: "TRANSMITTANCE",
    YKind.percent_transmittance: "TRANSMITTANCE",
    YKind.reflectance: "REFLECTANCE",
    YKind.kubelka_munk: "KUBELKA-MUNK",
}


def _sqz(v: int) -> str:
    s = str(abs(v))
    return (_SQZ_NEG if v < 0 else _SQZ_POS)[int(s[0])] + s[1:]


def _dif(v: int) -> str:
    s = str(abs(v))
    return (_DIF_NEG if v < 0 else _DIF_POS)[int(s[0])] + s[1:]


def _dup(count: int) -> str:
    s = str(count)
    return _DUP[int(s[0])] + s[1:]


def _clean(text: str) -> str:
    return " ".join(text.replace("$$", "$ $").replace("##", "# #").split())


def _num(v: float) -> str:
    return repr(float(v))


def _x_text(v: float) -> str:
    s = f"{v:.6f}".rstrip("0").rstrip(".")
    return s if s not in ("", "-") else "0"


def choose_y_factor(y: np.ndarray) -> float:
    """A power of ten that gives the largest |y| 8 significant digits as an integer."""
    peak = float(np.max(np.abs(y))) if y.size else 0.0
    if peak == 0 or not math.isfinite(peak):
        return 1.0
    return 10.0 ** (math.floor(math.log10(peak)) - 7)


def write_jcamp(
    spectrum: Spectrum,
    *,
    form: str = "affn",
    title: str | None = None,
    owner: str = "",
    y_factor: float | None = None,
    line_width: int = 80,
) -> str:
    """The spectrum as JCAMP-DX text (``\\n`` line ends).

    Parameters
    ----------
    form
        ``"affn"`` or ``"difdup"`` (the usual pair), or ``"pac"``, ``"sqz"``, ``"dif"``, ``"sqzdup"``.
    title, owner
        ``##TITLE=`` (default: the spectrum's title) and ``##OWNER=``.
    y_factor
        Override for ``##YFACTOR=`` (default: :func:`choose_y_factor`).
    line_width
        Longest data line; the standard asks for at most 80 characters.
    """
    if form not in FORMS:
        raise ValueError(f"form must be one of {', '.join(FORMS)}")
    x = np.asarray(spectrum.x, dtype=np.float64)
    y = np.asarray(spectrum.y, dtype=np.float64)
    n = x.size
    yf = float(y_factor) if y_factor else choose_y_factor(y)
    iy = np.rint(y / yf).astype(np.int64)
    meta = spectrum.meta
    head = [
        f"##TITLE={_clean(title if title is not None else meta.title) or 'untitled spectrum'}",
        "##JCAMP-DX=4.24 $$ written by Bandgate",
        "##DATA TYPE=INFRARED SPECTRUM",
        f"##ORIGIN={_clean(meta.origin) or 'unknown'}",
        f"##OWNER={_clean(owner)}",
    ]
    if meta.measured_at is not None:
        offset = meta.measured_at.strftime(" %z") if meta.measured_at.tzinfo else ""  # JCAMP-DX 5.01 [+-]UUUU
        head.append(f"##LONGDATE={meta.measured_at.strftime('%Y/%m/%d %H:%M:%S')}{offset}")
    if meta.instrument:
        head.append(f"##SPECTROMETER/DATA SYSTEM={_clean(meta.instrument)}")
    if meta.resolution_cm1:
        head.append(f"##RESOLUTION={meta.resolution_cm1:g}")
    if spectrum.kind is YKind.percent_transmittance:
        head.append("$$ values are percent transmittance")
    head += [
        "##XUNITS=1/CM",
        f"##YUNITS={_YUNITS[spectrum.kind]}",
        "##XFACTOR=1",
        f"##YFACTOR={_num(yf)}",
        f"##FIRSTX={_num(x[0])}",
        f"##LASTX={_num(x[-1])}",
        f"##NPOINTS={n}",
        f"##FIRSTY={_num(iy[0] * yf)}",
        f"##MAXY={_num(iy.max() * yf)}",
        f"##MINY={_num(iy.min() * yf)}",
    ]
    spacing = np.diff(x)
    even = bool(np.all(np.abs(spacing - (x[-1] - x[0]) / (n - 1)) <= 1e-7 * abs(x[-1] - x[0]) / (n - 1)))
    if even:
        deltax = (x[-1] - x[0]) / (n - 1)
        head.insert(len(head) - 4, f"##DELTAX={_num(deltax)}")
        head.append("##XYDATA=(X++(Y..Y))")
        xs = x[0] + np.arange(n) * deltax
        body = list(_xydata_lines(xs, iy, form, line_width))
    else:
        head.append("##XYPOINTS=(XY..XY)")
        body = [f"{_num(a)}, {int(b)}" for a, b in zip(x, iy)]
    return "\n".join(head + body + ["##END="]) + "\n"


def _run(seq: list[int], i: int) -> int:
    """Length of the run of equal items starting at ``i``."""
    r = 1
    while i + r < len(seq) and seq[i + r] == seq[i]:
        r += 1
    return r


def _xydata_lines(xs: np.ndarray, iy: np.ndarray, form: str, width: int) -> Iterator[str]:
    values = iy.tolist()
    n = len(values)
    if form in ("affn", "pac", "sqz", "sqzdup"):
        enc = {"affn": lambda v: f" {v}", "pac": lambda v: f"{v:+d}", "sqz": _sqz, "sqzdup": _sqz}[form]
        i = 0
        while i < n:
            line, start = _x_text(xs[i]), i
            while i < n:
                r = _run(values, i) if form == "sqzdup" else 1
                piece = enc(values[i]) + (_dup(r) if r > 1 else "")
                if len(line) + len(piece) > width and i > start:
                    break
                line += piece
                i += r
            yield line
        return
    # DIF forms: each line starts with an absolute ordinate (SQZ), then differences; the last
    # ordinate of a line is repeated at the start of the next (the Y check)
    diffs = np.diff(iy).tolist()
    i = 0
    while True:
        line = _x_text(xs[i]) + _sqz(values[i])
        j = i
        while j + 1 < n:
            r = _run(diffs, j) if form == "difdup" else 1
            piece = _dif(diffs[j]) + (_dup(r) if r > 1 else "")
            if len(line) + len(piece) > width and j > i:
                break
            line += piece
            j += r
        yield line
        if j + 1 >= n:
            yield _x_text(xs[j]) + _sqz(values[j])  # final Y check line
            return
        i = j
