"""The Spectrum: an immutable, validated wavenumber axis with values of an explicit kind."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from datetime import datetime
from enum import Enum
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.errors import UnusableInput

MIN_POINTS = 16


class SpectrumError(UnusableInput):
    """A spectrum cannot be built from what was given; the message says what is wrong."""

    code = "unusable-spectrum"
    title = "Spectrum is not usable"


class YKind(str, Enum):
    absorbance = "absorbance"
    transmittance = "transmittance"  # fraction, 0..1
    percent_transmittance = "percent_transmittance"  # 0..100
    reflectance = "reflectance"
    kubelka_munk = "kubelka_munk"


@dataclass(frozen=True)
class SpectrumMeta:
    """Where a spectrum came from. `sha256` is of the original bytes as received."""

    title: str = ""
    origin: str = ""
    instrument: str = ""
    resolution_cm1: float | None = None
    measured_at: datetime | None = None
    file_name: str = ""
    sha256: str = ""
    format: str = ""

    def as_dict(self) -> dict[str, Any]:
        return {
            "title": self.title,
            "origin": self.origin,
            "instrument": self.instrument,
            "resolution_cm1": self.resolution_cm1,
            "measured_at": self.measured_at.isoformat() if self.measured_at else None,
            "file_name": self.file_name,
            "sha256": self.sha256,
            "format": self.format,
        }


def _frozen(a: NDArray[np.float64]) -> NDArray[np.float64]:
    a = np.array(a, dtype=np.float64, copy=True)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class Spectrum:
    """Wavenumbers (cm⁻¹, strictly ascending, float64) and values of one `YKind`.

    Build with :meth:`create`, which sorts, validates and freezes the arrays; the arrays of a
    Spectrum are read-only. ``notes`` records what a reader or a conversion decided on the
    caller's behalf (e.g. "x axis given in micrometres; converted to cm⁻¹").
    """

    x: NDArray[np.float64]
    y: NDArray[np.float64]
    kind: YKind
    meta: SpectrumMeta = field(default_factory=SpectrumMeta)
    notes: tuple[str, ...] = ()

    @classmethod
    def create(
        cls,
        x: Any,
        y: Any,
        kind: YKind | str,
        *,
        meta: SpectrumMeta | None = None,
        notes: tuple[str, ...] | list[str] = (),
        min_points: int = MIN_POINTS,
    ) -> "Spectrum":
        try:
            xa = np.asarray(x, dtype=np.float64).ravel()
            ya = np.asarray(y, dtype=np.float64).ravel()
        except (TypeError, ValueError) as exc:
            raise SpectrumError(f"values are not numbers ({exc})") from None
        try:
            kind = YKind(kind)
        except ValueError:
            raise SpectrumError(
                f"unknown value kind {kind!r}; use one of {', '.join(k.value for k in YKind)}"
            ) from None
        if xa.size != ya.size:
            raise SpectrumError(f"the axis has {xa.size} points but there are {ya.size} values; they must match")
        if xa.size < min_points:
            raise SpectrumError(
                f"only {xa.size} points; a spectrum needs at least {min_points} (is this a peak table or a fragment?)"
            )
        if not (np.isfinite(xa).all() and np.isfinite(ya).all()):
            bad = ~np.isfinite(xa) | ~np.isfinite(ya)
            i = int(np.flatnonzero(bad)[0])
            raise SpectrumError(
                f"{int(bad.sum())} non-finite value(s), first at point {i + 1} (x={xa[i]!r}, y={ya[i]!r}); "
                "export the spectrum again without blanks or NaN"
            )
        dx = xa[1:] - xa[:-1]
        if (dx > 0).all():  # strictly ascending (a stable sort would change nothing; no value repeats)
            xs, ys = xa, ya
        elif (dx < 0).all():  # strictly descending, as many exports: the sort is a reversal
            xs, ys = xa[::-1], ya[::-1]
        else:
            order = np.argsort(xa, kind="stable")
            xs, ys = xa[order], ya[order]
            dx = xs[1:] - xs[:-1]
            if (dx <= 0).any():
                i = int(np.flatnonzero(dx <= 0)[0])
                raise SpectrumError(
                    f"the axis repeats the value {xs[i]:g} cm⁻¹; every point needs its own wavenumber"
                )
        return cls(_frozen(xs), _frozen(ys), kind, meta or SpectrumMeta(), tuple(notes))

    def with_values(self, y: Any, kind: YKind | str | None = None, *, note: str | None = None) -> "Spectrum":
        """A new spectrum on the same axis with new values (and optionally a new kind and a note)."""
        ya = np.asarray(y, dtype=np.float64)
        if ya.shape != self.x.shape:
            raise SpectrumError(f"{ya.size} values for an axis of {self.x.size} points")
        notes = self.notes + ((note,) if note else ())
        return replace(self, y=_frozen(ya), kind=YKind(kind) if kind else self.kind, notes=notes)

    def with_note(self, note: str) -> "Spectrum":
        return replace(self, notes=self.notes + (note,))

    @property
    def n_points(self) -> int:
        return int(self.x.size)

    @property
    def range_cm1(self) -> tuple[float, float]:
        return float(self.x[0]), float(self.x[-1])

    @property
    def spacing_cm1(self) -> float:
        """Median point spacing in cm⁻¹."""
        return float(np.median(np.diff(self.x)))
