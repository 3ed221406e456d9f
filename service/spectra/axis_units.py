"""Units of the two axes, shared by the readers: abscissa to cm⁻¹, ordinate to a `YKind`.

Wavelength to wavenumber: ν̃ [cm⁻¹] = 10⁴ / λ [µm] = 10⁷ / λ [nm] (definition of the
wavenumber). Which kind of value a column holds is decided from what the file says, and
where it says nothing, from the values (common practice: a transmittance spectrum sits near
its top with bands dipping down, an absorbance spectrum near zero with bands rising); every
decision made for the caller is written into a note on the spectrum.
"""

from __future__ import annotations

import re
from enum import Enum

import numpy as np
from numpy.typing import NDArray

from service.spectra.model import YKind
from service.spectra.reader_errors import ReaderError


class XUnit(str, Enum):
    wavenumber = "cm-1"
    micrometre = "um"
    nanometre = "nm"


_X_NAMES = {
    "1/CM": XUnit.wavenumber, "CM-1": XUnit.wavenumber, "CM^-1": XUnit.wavenumber, "CM**-1": XUnit.wavenumber,
    "1/CENTIMETERS": XUnit.wavenumber, "WAVENUMBER": XUnit.wavenumber, "WAVENUMBERS": XUnit.wavenumber,
    "WAVENUMBERS(CM-1)": XUnit.wavenumber, "CM⁻¹": XUnit.wavenumber, "CM-¹": XUnit.wavenumber,
    "MICROMETERS": XUnit.micrometre, "MICROMETRES": XUnit.micrometre, "MICROMETER": XUnit.micrometre,
    "MICROMETRE": XUnit.micrometre, "MICRONS": XUnit.micrometre, "MICRON": XUnit.micrometre,
    "UM": XUnit.micrometre, "µM": XUnit.micrometre, "ΜM": XUnit.micrometre,
    "NANOMETERS": XUnit.nanometre, "NANOMETRES": XUnit.nanometre, "NANOMETER": XUnit.nanometre,
    "NANOMETRE": XUnit.nanometre, "NM": XUnit.nanometre,
}
_X_LABEL = {XUnit.wavenumber: "wavenumber in cm⁻¹", XUnit.micrometre: "wavelength in µm",
            XUnit.nanometre: "wavelength in nm"}


def parse_x_unit(text: str | XUnit | None) -> XUnit | None:
    """A caller's or a file's abscissa unit; None when not given. Unknown names are errors."""
    if text is None or text == "":
        return None
    if isinstance(text, XUnit):
        return text
    key = re.sub(r"\s+", "", str(text)).upper()
    if key in _X_NAMES:
        return _X_NAMES[key]
    for unit in XUnit:
        if key == unit.value.upper():
            return unit
    raise ReaderError(
        f"abscissa unit {text!r} is not one this tool reads; use wavenumber (1/CM, cm-1), "
        "wavelength in micrometres (MICROMETERS, um) or nanometres (NANOMETERS, nm)"
    )


def guess_x_unit(x: NDArray[np.float64]) -> XUnit:
    """Mid-IR axis by range: 2.5-25 µm is wavelength, 400-4000 cm⁻¹ is wavenumber (common practice).

    Values up to 50 are read as µm; anything else as cm⁻¹. Nanometres are never guessed
    (2,500-25,000 nm overlaps wavenumbers): the file or the caller must say so.
    """
    hi = float(np.max(x))
    return XUnit.micrometre if 0 < hi <= 50 else XUnit.wavenumber


def to_wavenumber(x: NDArray[np.float64], unit: XUnit) -> tuple[NDArray[np.float64], str | None]:
    """Abscissa converted to cm⁻¹, with a note when anything was converted."""
    if unit is XUnit.wavenumber:
        return x, None
    if (x <= 0).any():
        raise ReaderError(f"a wavelength of {float(np.min(x)):g} {unit.value} cannot be converted to a wavenumber")
    factor = 1e4 if unit is XUnit.micrometre else 1e7
    lo, hi = float(np.min(x)), float(np.max(x))
    note = (f"abscissa given as {_X_LABEL[unit]} ({lo:g}-{hi:g}); converted to wavenumber "
            f"(cm⁻¹ = {factor:.0e} / wavelength), so the points are no longer evenly spaced")
    return factor / x, note.replace("1e+04", "10⁴").replace("1e+07", "10⁷")


def x_unit_label(unit: XUnit) -> str:
    return _X_LABEL[unit]


# ---------------------------------------------------------------- ordinate kinds

_Y_NAMES: dict[str, str] = {
    "ABSORBANCE": "A", "A": "A", "ABS": "A", "ABSORBANCEUNITS": "A", "AU": "A", "ABSORBANCE(AU)": "A",
    "TRANSMITTANCE": "T?", "T": "T?", "TRANSMISSION": "T?", "TRANS": "T?",
    "%T": "%T", "%TRANSMITTANCE": "%T", "PERCENTTRANSMITTANCE": "%T", "TRANSMITTANCE(%)": "%T",
    "TRANSMITTANCE%": "%T", "%TRANSMISSION": "%T", "T%": "%T",
    "REFLECTANCE": "R", "R": "R", "%R": "R", "%REFLECTANCE": "R", "REFLECTANCE(%)": "R",
    "KUBELKA-MUNK": "KM", "KUBELKAMUNK": "KM", "KM": "KM", "K-M": "KM", "KUBELKA-MUNKUNITS": "KM",
    "LOG(1/R)": "logR", "LOG1/R": "logR", "LOG(1/REFLECTANCE)": "logR",
}


def y_kind_from_label(text: str) -> str | None:
    """'A', 'T?', '%T', 'R', 'KM' or 'logR' for a YUNITS/header word; None if unknown."""
    key = re.sub(r"\s+", "", text).upper()
    return _Y_NAMES.get(key)


def parse_y_kind(value: YKind | str | None) -> YKind | None:
    if value is None or value == "":
        return None
    try:
        return YKind(value)
    except ValueError:
        code = y_kind_from_label(str(value))
        mapped = {"A": YKind.absorbance, "%T": YKind.percent_transmittance, "R": YKind.reflectance,
                  "KM": YKind.kubelka_munk, "T?": YKind.transmittance}.get(code or "")
        if mapped is None:
            raise ReaderError(
                f"value kind {value!r} is not known; use one of {', '.join(k.value for k in YKind)}"
            ) from None
        return mapped


def transmittance_scale(y: NDArray[np.float64]) -> YKind:
    """Fraction or percent transmittance, from the values: percent if the upper values pass 1.5
    (no real fraction does; a percent spectrum below 1.5 % everywhere is opaque and unusable)."""
    return YKind.percent_transmittance if float(np.percentile(y, 99)) > 1.5 else YKind.transmittance


def guess_y_kind(y: NDArray[np.float64]) -> tuple[YKind, str]:
    """Judge the kind of an unlabelled value column; returns the kind and the reason.

    Transmittance: baseline high, bands dip (median in the upper half of the range).
    Absorbance: baseline low, bands rise. Refuses when the values fit neither.
    """
    lo, hi = float(np.min(y)), float(np.max(y))
    med = float(np.median(y))
    if hi <= lo:
        raise ReaderError("all values are equal; this is not a spectrum")
    upper_half = (med - lo) > 0.5 * (hi - lo)
    if upper_half and 5 < hi <= 120 and lo > -5:
        return YKind.percent_transmittance, f"values {lo:.3g} to {hi:.3g} with the baseline high: percent transmittance"
    if upper_half and 0.2 < hi <= 1.2 and lo > -0.05:
        return YKind.transmittance, f"values {lo:.3g} to {hi:.3g} with the baseline high: transmittance (fraction)"
    if not upper_half and hi <= 6 and lo > -1:
        return YKind.absorbance, f"values {lo:.3g} to {hi:.3g} with the baseline low: absorbance"
    raise ReaderError(
        f"cannot tell what the values are (range {lo:.3g} to {hi:.3g}, median {med:.3g}); "
        "name the column (e.g. 'absorbance', '%T') or give the value kind explicitly"
    )
