"""The server-side spectrum plot: an SVG with the wavenumber axis high → low, a legend, shaded windows."""

from __future__ import annotations

import xml.etree.ElementTree as ET

import numpy as np
import pytest

from service.web.plots import BandMark, PlotError, Region, SpectrumPlot, Trace, render_svg

SVG = "{http://www.w3.org/2000/svg}"


def _gauss(x: np.ndarray, centre: float, width: float, height: float) -> np.ndarray:
    return height * np.exp(-0.5 * ((x - centre) / width) ** 2)


def make_plot(**overrides) -> SpectrumPlot:
    x = np.linspace(400.0, 4000.0, 1801)
    sample = _gauss(x, 1740, 12, 0.8) + _gauss(x, 2920, 20, 0.5) + 0.02
    reference = _gauss(x, 1742, 12, 0.75) + _gauss(x, 2921, 20, 0.5) + 0.02
    fields = dict(
        sample=Trace(x=x, y=sample, label="Sample C-01"),
        reference=Trace(x=x, y=reference, label="Reference R-7"),
        required=(Region(low=1700, high=1780, label="C=O"),),
        forbidden=(Region(low=2210, high=2260),),
        excluded=(Region(low=2280, high=2400),),
        bands=(BandMark(position_cm1=1740.2), BandMark(position_cm1=2920.0)),
    )
    fields.update(overrides)
    return SpectrumPlot(**fields)


def _texts(svg: str) -> dict[str, list[float]]:
    root = ET.fromstring(svg)
    out: dict[str, list[float]] = {}
    for t in root.iter(SVG + "text"):
        if t.text:
            out.setdefault(t.text.strip(), []).append(float(t.get("x", "nan")))
    return out


def test_svg_is_well_formed_scales_to_width_and_has_an_accessible_name() -> None:
    svg = render_svg(make_plot())
    root = ET.fromstring(svg)  # raises if not well-formed
    assert root.tag == SVG + "svg"
    assert "width" not in root.attrib and "viewBox" in root.attrib
    assert root.get("role") == "img"
    assert "from high to low" in root.get("aria-label", "")
    assert root.find(SVG + "title") is not None


def test_wavenumber_axis_runs_from_high_to_low() -> None:
    texts = _texts(render_svg(make_plot()))
    # tick labels: 4000 is drawn left of 500 (the trade's convention)
    assert texts["4000"][0] < texts["1000"][0] < texts["500"][0]
    assert "Wavenumber (cm⁻¹)" in texts


def test_legend_names_every_element() -> None:
    texts = _texts(render_svg(make_plot(show_difference=True)))
    for label in ("Sample C-01", "Reference R-7", "required window", "forbidden window", "excluded region",
                  "band found (position, cm⁻¹)", "fingerprint region (bar at top)",
                  "difference (sample − reference)"):
        assert label in texts, label


def test_windows_are_shaded_with_hatching_and_bands_labelled() -> None:
    svg = render_svg(make_plot())
    # three hatch patterns: diagonal (required), cross (forbidden), dots (excluded)
    assert svg.count("<pattern") >= 3  # diagonal (required), cross (forbidden), dots (excluded), + legend keys
    texts = _texts(svg)
    assert "1740.2" in texts and "2920.0" in texts


def test_without_windows_there_is_no_hatching() -> None:
    svg = render_svg(make_plot(required=(), forbidden=(), excluded=(), bands=()))
    assert "<pattern" not in svg
    assert "required window" not in _texts(svg)


def test_difference_panel_only_when_asked_and_with_a_reference() -> None:
    assert "Difference" in _texts(render_svg(make_plot(show_difference=True)))
    assert "Difference" not in _texts(render_svg(make_plot(show_difference=False)))
    assert "Difference" not in _texts(render_svg(make_plot(reference=None, show_difference=True)))


def test_descending_input_is_drawn_the_same_as_ascending() -> None:
    p = make_plot()
    x, y = np.asarray(p.sample.x), np.asarray(p.sample.y)
    flipped = make_plot(sample=Trace(x=x[::-1], y=y[::-1], label="Sample C-01"))
    assert render_svg(p) == render_svg(flipped)


def test_long_traces_are_thinned_but_keep_the_band_maximum() -> None:
    x = np.linspace(400.0, 4000.0, 20001)
    y = _gauss(x, 1601.3, 1.5, 1.234) + 0.01
    svg = render_svg(SpectrumPlot(sample=Trace(x=x, y=y, label="s"), fingerprint=None))
    assert len(svg) < 300_000
    assert "fingerprint region" not in svg


def test_mismatched_trace_is_refused() -> None:
    with pytest.raises(PlotError, match="2 wavenumbers and 3 values"):
        render_svg(SpectrumPlot(sample=Trace(x=[1.0, 2.0], y=[1.0, 2.0, 3.0], label="bad")))


def test_labels_are_escaped() -> None:
    svg = render_svg(make_plot(sample=Trace(x=[1000.0, 2000.0, 3000.0], y=[0.1, 0.2, 0.1], label='<b>&"x"'),
                               reference=None, required=(), forbidden=(), excluded=(), bands=()))
    ET.fromstring(svg)
    assert "<b>" not in svg


def test_a_window_limits_the_axis_and_the_scale_to_the_specified_range() -> None:
    x = np.linspace(400.0, 4000.0, 3601)
    y = _gauss(x, 1600, 10, 0.5) + _gauss(x, 700, 10, 5.0)  # a huge band outside the range
    svg = render_svg(SpectrumPlot(sample=Trace(x=x, y=y, label="s"), window=(800.0, 3200.0)))
    texts = _texts(svg)
    assert "3000" in texts and "4000" not in texts and "500" not in texts
    assert "5" not in texts  # the y axis is not stretched by the band at 700 cm⁻¹
