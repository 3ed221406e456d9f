"""Server-side spectrum plots as SVG (matplotlib, no pyplot, no display).

One figure kind serves the evaluation page and the instrument-check page: a sample trace over a
reference trace in absorbance, the wavenumber axis running from high to low (the trade's
convention), shaded windows (required, forbidden, excluded), found bands marked with their
positions, the fingerprint region (below 1500 cm⁻¹, common practice) marked along the top, and an
optional difference panel underneath.

Colours are our own choice from a colour-blind-safe set (blue / orange / bluish green / reddish
purple / grey, the hues of the Okabe & Ito 2008 palette); every element is also told apart by line
style or hatching, so the figure reads in grey-scale print and without colour vision.

The figure is built with :class:`matplotlib.figure.Figure` and the SVG canvas directly, so it is
thread-safe and never touches a GUI backend. Text stays text in the SVG (searchable, small).
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass, field
from typing import Sequence

import matplotlib

matplotlib.use("Agg")  # never a GUI backend on a server

import numpy as np  # noqa: E402
from matplotlib.backends.backend_svg import FigureCanvasSVG  # noqa: E402
from matplotlib.colors import to_rgba  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402

FINGERPRINT_CM1 = (400.0, 1500.0)  # below 1500 cm⁻¹: the fingerprint region (common practice)

# Our palette (hues from Okabe & Ito 2008, "Color Universal Design"), each paired with a
# line style or hatch so it also reads without colour.
INK = "#1d2329"
SAMPLE = "#0a5a96"  # blue, solid
REFERENCE = "#c4580a"  # orange, dashed
REQUIRED = "#1b8a6b"  # bluish green, hatch //
FORBIDDEN = "#b0477f"  # reddish purple, hatch xx
EXCLUDED = "#8a8f96"  # grey, hatch ..
DIFFERENCE = "#3f4750"  # dark grey, solid
FINGERPRINT = "#e9ecef"

_RC = {
    "svg.fonttype": "none",  # keep text as text
    "svg.hashsalt": "bandgate",  # stable element ids: same input, same bytes
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans"],
    "font.size": 10,
    "axes.edgecolor": INK,
    "axes.labelcolor": INK,
    "xtick.color": INK,
    "ytick.color": INK,
    "hatch.linewidth": 0.8,
}


@dataclass(frozen=True, kw_only=True)
class Trace:
    """A spectrum to draw: ascending or descending wavenumbers (cm⁻¹) and absorbance values."""

    x: Sequence[float] | np.ndarray
    y: Sequence[float] | np.ndarray
    label: str


@dataclass(frozen=True, kw_only=True)
class Region:
    """A wavenumber window [low, high] cm⁻¹ with a short label (e.g. "C=O 1750–1735")."""

    low: float
    high: float
    label: str = ""


@dataclass(frozen=True, kw_only=True)
class BandMark:
    """A found band, drawn as a marker above the trace with its position in cm⁻¹."""

    position_cm1: float
    label: str | None = None  # default: the position, one decimal


@dataclass(frozen=True, kw_only=True)
class SpectrumPlot:
    """Everything one figure shows. Build it in the page layer from an evaluation or a check."""

    sample: Trace
    reference: Trace | None = None
    required: tuple[Region, ...] = ()
    forbidden: tuple[Region, ...] = ()
    excluded: tuple[Region, ...] = ()
    bands: tuple[BandMark, ...] = ()
    fingerprint: tuple[float, float] | None = FINGERPRINT_CM1
    show_difference: bool = False
    title: str = ""
    y_label: str = "Absorbance"
    required_label: str = "required window"
    window: tuple[float, float] | None = None  # the range shown (cm⁻¹), e.g. the specification's range
    description: str = field(default="")  # accessible text; a default is composed if empty


class PlotError(ValueError):
    """The data cannot be drawn (empty trace, mismatched lengths)."""


def _arrays(trace: Trace) -> tuple[np.ndarray, np.ndarray]:
    x = np.asarray(trace.x, dtype=float).ravel()
    y = np.asarray(trace.y, dtype=float).ravel()
    if x.size == 0 or x.size != y.size:
        raise PlotError(f"trace {trace.label!r} has {x.size} wavenumbers and {y.size} values")
    order = np.argsort(x)
    return x[order], y[order]


def _difference(sx: np.ndarray, sy: np.ndarray, rx: np.ndarray, ry: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    lo, hi = max(sx[0], rx[0]), min(sx[-1], rx[-1])
    keep = (sx >= lo) & (sx <= hi)
    if keep.sum() < 2:
        return np.empty(0), np.empty(0)
    return sx[keep], sy[keep] - np.interp(sx[keep], rx, ry)


def _describe(plot: SpectrumPlot) -> str:
    parts = [f"Spectrum plot: {plot.sample.label}"]
    if plot.reference is not None:
        parts.append(f"over {plot.reference.label}")
    parts.append("in absorbance against wavenumber, axis from high to low.")
    if plot.required:
        parts.append(f"{len(plot.required)} {plot.required_label}(s) shaded with diagonal hatching.")
    if plot.forbidden:
        parts.append(f"{len(plot.forbidden)} forbidden window(s) shaded with cross hatching.")
    if plot.excluded:
        parts.append(f"{len(plot.excluded)} excluded region(s) shaded with dots.")
    if plot.bands:
        shown = ", ".join(f"{b.position_cm1:.1f}" for b in plot.bands[:30])
        parts.append(f"Bands found at {shown} cm⁻¹.")
    return " ".join(parts)


def _shade(ax, regions: tuple[Region, ...], *, colour: str, hatch: str, alpha: float) -> None:
    for r in regions:
        lo, hi = sorted((float(r.low), float(r.high)))
        ax.axvspan(lo, hi, facecolor=to_rgba(colour, alpha), linewidth=0.0, zorder=0)
        # hatching as its own layer so the face's transparency does not wash it out
        ax.axvspan(lo, hi, facecolor="none", edgecolor=to_rgba(colour, 0.8), hatch=hatch, linewidth=0.0, zorder=0.1)


def _key(colour: str, hatch: str, alpha: float, label: str) -> Patch:
    r, g, b, _ = to_rgba(colour)
    light = (1 - alpha * (1 - r), 1 - alpha * (1 - g), 1 - alpha * (1 - b), 1.0)  # opaque tint, hatch stays crisp
    return Patch(facecolor=light, edgecolor=to_rgba(colour, 0.8), hatch=hatch, linewidth=0.0, label=label)


MAX_POINTS = 1600


def _thin(x: np.ndarray, y: np.ndarray, limit: int = MAX_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Keep each bucket's minimum and maximum (in order) so no band disappears at page width."""
    if x.size <= limit:
        return x, y
    buckets = limit // 2
    edges = np.linspace(0, x.size, buckets + 1).astype(int)
    keep: list[int] = []
    for a, b in zip(edges[:-1], edges[1:]):
        if b <= a:
            continue
        i, j = a + int(np.argmin(y[a:b])), a + int(np.argmax(y[a:b]))
        keep.extend(sorted({i, j}))
    idx = np.asarray(keep)
    return x[idx], y[idx]


def render_svg(plot: SpectrumPlot, *, width_in: float = 10.0, height_in: float = 4.6) -> str:
    """Draw ``plot`` and return an SVG document (text) that scales to its container's width.

    The x axis runs from high to low wavenumber. With ``show_difference`` and a reference, a
    second panel below shows sample − reference on the sample's axis (linear interpolation of the
    reference, overlap only).
    """
    sx, sy = _arrays(plot.sample)
    ref = _arrays(plot.reference) if plot.reference is not None else None
    diff = _difference(sx, sy, *ref) if (plot.show_difference and ref is not None) else None
    with_diff = diff is not None and diff[0].size > 0
    height = height_in + (1.6 if with_diff else 0.0)

    with matplotlib.rc_context(_RC):
        fig = Figure(figsize=(width_in, height), dpi=96)  # fixed margins: constrained layout costs a 2nd draw
        FigureCanvasSVG(fig)
        n_keys = 2 + bool(plot.reference) + bool(plot.required) + bool(plot.forbidden) + bool(plot.excluded) \
            + bool(plot.bands) + bool(with_diff)
        labels = [plot.sample.label] + ([plot.reference.label] if plot.reference else [])
        per_row = 4 if max(map(len, labels)) <= 34 else 3 if max(map(len, labels)) <= 48 else 2
        legend_in = 0.62 + 0.2 * -(-n_keys // per_row)
        grid = dict(left=0.8 / width_in, right=1 - 0.15 / width_in, top=1 - (0.42 if plot.title else 0.15) / height,
                    bottom=legend_in / height, hspace=0.08)
        if with_diff:
            ax, axd = fig.subplots(2, 1, sharex=True, height_ratios=[3.2, 1.0], gridspec_kw=grid)
        else:
            ax, axd = fig.subplots(1, 1, gridspec_kw=grid), None

        x_lo = float(sx[0] if ref is None else min(sx[0], ref[0][0]))
        x_hi = float(sx[-1] if ref is None else max(sx[-1], ref[0][-1]))
        if plot.window is not None:
            w_lo, w_hi = sorted(float(v) for v in plot.window)
            if w_hi > max(w_lo, x_lo) and w_lo < x_hi:
                x_lo, x_hi = max(x_lo, w_lo), min(x_hi, w_hi)

        def shown(x: np.ndarray, y: np.ndarray) -> np.ndarray:
            keep = (x >= x_lo) & (x <= x_hi)
            return y[keep] if keep.any() else y
        handles: list = []

        if plot.fingerprint is not None:
            f_lo, f_hi = sorted(plot.fingerprint)
            f_lo, f_hi = max(f_lo, x_lo), min(f_hi, x_hi)
            if f_hi > f_lo:
                ax.axvspan(f_lo, f_hi, ymin=0.965, ymax=1.0, facecolor=INK, alpha=0.55, linewidth=0, zorder=3)
                ax.text((f_lo + f_hi) / 2, 0.955, "fingerprint region", transform=ax.get_xaxis_transform(),
                        ha="center", va="top", fontsize=8, color=INK, zorder=4)
                handles.append(Patch(facecolor=INK, alpha=0.55, label="fingerprint region (bar at top)"))

        _shade(ax, plot.required, colour=REQUIRED, hatch="//", alpha=0.16)
        _shade(ax, plot.forbidden, colour=FORBIDDEN, hatch="xx", alpha=0.16)
        _shade(ax, plot.excluded, colour=EXCLUDED, hatch="..", alpha=0.22)
        if plot.required:
            handles.append(_key(REQUIRED, "//", 0.16, plot.required_label))
        if plot.forbidden:
            handles.append(_key(FORBIDDEN, "xx", 0.16, "forbidden window"))
        if plot.excluded:
            handles.append(_key(EXCLUDED, "..", 0.22, "excluded region"))

        if ref is not None:
            (ref_line,) = ax.plot(*_thin(*ref), color=REFERENCE, linestyle=(0, (5, 2.5)), linewidth=1.3,
                                  label=plot.reference.label, zorder=2)  # type: ignore[union-attr]
            handles.insert(0, ref_line)
        (sample_line,) = ax.plot(*_thin(sx, sy), color=SAMPLE, linewidth=1.4, label=plot.sample.label, zorder=2.5)
        handles.insert(0, sample_line)

        visible = [shown(sx, sy)] + ([shown(*ref)] if ref is not None else [])
        top = float(max(np.nanmax(v) for v in visible))
        bottom = float(min(np.nanmin(v) for v in visible))
        span = (top - bottom) or 1.0
        ax.set_ylim(bottom - 0.05 * span, top + (0.32 if plot.bands else 0.08) * span)
        if plot.bands:
            for b in plot.bands:
                pos = float(b.position_cm1)
                if not x_lo <= pos <= x_hi:
                    continue
                yv = float(np.interp(pos, sx, sy))
                ax.plot([pos], [yv + 0.03 * span], marker="v", markersize=5, color=INK, linestyle="none", zorder=5)
                ax.text(pos, yv + 0.06 * span, b.label or f"{pos:.1f}", rotation=90, ha="center", va="bottom",
                        fontsize=7.5, color=INK, zorder=5)
            handles.append(Line2D([], [], marker="v", color=INK, linestyle="none", markersize=5,
                                  label="band found (position, cm⁻¹)"))

        ax.set_xlim(x_hi, x_lo)  # high → low
        ax.set_ylabel(plot.y_label)
        ax.grid(True, color="#d5d9de", linewidth=0.5, zorder=-1)
        if plot.title:
            ax.set_title(plot.title, loc="left", fontsize=11, color=INK)
        if axd is not None and diff is not None:
            axd.axhline(0.0, color=EXCLUDED, linewidth=0.6)
            (dline,) = axd.plot(*_thin(*diff), color=DIFFERENCE, linewidth=1.0, label="difference (sample − reference)")
            dv = shown(*diff)
            d_lo, d_hi = float(np.nanmin(dv)), float(np.nanmax(dv))
            pad = 0.08 * ((d_hi - d_lo) or 1e-3)
            axd.set_ylim(d_lo - pad, d_hi + pad)
            axd.set_ylabel("Difference")
            axd.set_xlabel("Wavenumber (cm⁻¹)")
            axd.grid(True, color="#d5d9de", linewidth=0.5)
            handles.append(dline)
        else:
            ax.set_xlabel("Wavenumber (cm⁻¹)")
        longest = max(len(h.get_label()) for h in handles)
        ncols = 4 if longest <= 34 else 3 if longest <= 48 else 2
        fig.legend(handles=handles, loc="lower center", bbox_to_anchor=(0.5, 0.0), ncols=min(ncols, len(handles)),
                   frameon=False, fontsize=8.5)

        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None, "Creator": None})
    return _tidy(buf.getvalue(), plot.description or _describe(plot))


_PROLOGUE = re.compile(r"^.*?(?=<svg)", re.S)


def _tidy(svg: str, description: str) -> str:
    """Strip the XML prologue (for inline use), make it scale to width and give it an accessible name."""
    svg = _PROLOGUE.sub("", svg, count=1)
    svg = re.sub(r'<svg([^>]*?) width="[^"]*" height="[^"]*"', r'<svg\1', svg, count=1)
    esc = description.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace('"', "&quot;")
    svg = svg.replace("<svg", f'<svg class="plot" role="img" aria-label="{esc}"', 1)
    return svg.replace(">", f"><title>{esc}</title>", 1)
