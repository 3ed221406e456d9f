"""Pages: the server-side SVG plot (drawn on every evaluation, review and check page)."""

from __future__ import annotations

import numpy as np

from service.bench import BenchCase


def _bands(x: np.ndarray, centres: list[tuple[float, float, float]]) -> np.ndarray:
    y = np.full_like(x, 0.02)
    for c, w, h in centres:
        y += h * np.exp(-0.5 * ((x - c) / w) ** 2)
    return y


def _evaluation_plot() -> object:
    from service.web.plots import BandMark, Region, SpectrumPlot, Trace

    x = np.linspace(650.0, 4000.0, 3475)  # ~1 cm⁻¹ spacing, a typical ATR export
    sample = _bands(x, [(2920, 20, 0.5), (1740, 12, 0.8), (1495, 6, 0.6), (1200, 15, 0.6), (730, 8, 0.9)])
    reference = _bands(x, [(2921, 20, 0.52), (1742, 12, 0.75), (1495, 6, 0.62), (1201, 15, 0.58), (730, 8, 0.88)])
    return SpectrumPlot(
        sample=Trace(x=x, y=sample, label="sample"), reference=Trace(x=x, y=reference, label="reference"),
        required=(Region(low=1700, high=1780), Region(low=1480, high=1510)), forbidden=(Region(low=2210, high=2260),),
        excluded=(Region(low=1900, high=2300),), bands=tuple(BandMark(position_cm1=p) for p in (2920, 1740, 1495, 1200)),
        show_difference=True, window=(800.0, 3200.0))


def _check_plot() -> object:
    from service.web.plots import Region, SpectrumPlot, Trace

    x = np.arange(600.0, 3400.0, 0.5)
    y = _bands(x, [(3060, 3, 0.45), (2849.5, 3, 0.55), (1601.2, 2, 0.35), (1583, 2, 0.2), (1028.3, 2, 0.3)])
    return SpectrumPlot(sample=Trace(x=x, y=y, label="polystyrene film"), fingerprint=None,
                        required=tuple(Region(low=p - 1.5, high=p + 1.5) for p in (3060, 2849.5, 1601.2, 1583, 1028.3)))


def _render(plot: object) -> None:
    from service.web.plots import render_svg

    render_svg(plot)  # type: ignore[arg-type]


def cases() -> list[BenchCase]:
    return [
        BenchCase("plot: sample over reference + difference, 3,475 points (SVG)", _render, setup=_evaluation_plot,
                  repeats=5, aim="legible at page width; drawn per evaluation page view"),
        BenchCase("plot: polystyrene check, 5,600 points thinned (SVG)", _render, setup=_check_plot, repeats=5),
    ]
