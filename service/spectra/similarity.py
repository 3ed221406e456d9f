"""Similarity of two spectra on the same axis, each metric named for what it computes.

- :func:`pearson` — Pearson correlation coefficient r: both series mean-centred, then the cosine
  of the angle between them. Insensitive to offset and scale.
- :func:`cosine` — cosine similarity, *not* centred (for contrast: an offset raises it).
- :func:`first_derivative_correlation` — Pearson r of the Savitzky-Golay first derivatives;
  removes constant offsets and reduces the weight of broad baseline differences.
- :func:`euclidean_distance` — distance between the two vector-normalised (unit-length) series;
  0 for identical shape, at most 2.

Pearson is computed by hand (centre + dot, ~0.04 ms) rather than via ``scipy.stats.pearsonr``
(~0.67 ms) or ``numpy.corrcoef``; ``mask`` restricts any metric to chosen regions
(see ``service.spectra.preprocess.mask_regions``).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.errors import InvalidInput
from service.spectra.smoothing import SavitzkyGolay


def _pair(a: Any, b: Any, mask: Any = None) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    aa = np.asarray(a, dtype=np.float64)
    ba = np.asarray(b, dtype=np.float64)
    if aa.ndim != 1 or aa.shape != ba.shape:
        raise InvalidInput(
            f"spectra to compare must be on the same axis: {aa.size} and {ba.size} values (resample first)"
        )
    if mask is not None:
        m = np.asarray(mask, dtype=bool)
        if m.shape != aa.shape:
            raise InvalidInput(f"the region mask has {m.size} points for {aa.size} values")
        aa, ba = aa[m], ba[m]
    if aa.size < 3:
        raise InvalidInput(f"only {aa.size} points left to compare; choose wider regions")
    return aa, ba


def pearson(a: Any, b: Any, *, mask: Any = None) -> float:
    """Pearson correlation coefficient r (mean-centred).

    [1, 2, 3, 4] against [2, 4, 6, 8.5] gives r = 0.99838 (cosine similarity: 0.99955).
    A constant series has no defined correlation: an error says so.
    """
    aa, ba = _pair(a, b, mask)
    ac = aa - aa.mean()
    bc = ba - ba.mean()
    denom = math.sqrt(float(np.dot(ac, ac)) * float(np.dot(bc, bc)))
    if denom == 0.0:
        raise InvalidInput("correlation is undefined for a constant series (flat spectrum or region)")
    return float(np.clip(np.dot(ac, bc) / denom, -1.0, 1.0))


def cosine(a: Any, b: Any, *, mask: Any = None) -> float:
    """Cosine similarity (not mean-centred): a·b / (|a| |b|)."""
    aa, ba = _pair(a, b, mask)
    denom = math.sqrt(float(np.dot(aa, aa)) * float(np.dot(ba, ba)))
    if denom == 0.0:
        raise InvalidInput("cosine similarity is undefined for an all-zero series")
    return float(np.clip(np.dot(aa, ba) / denom, -1.0, 1.0))


def first_derivative_correlation(a: Any, b: Any, *, mask: Any = None,
                                 derivative: SavitzkyGolay | None = None) -> float:
    """Pearson r of the Savitzky-Golay first derivatives (default: 9-point quadratic).

    The derivative is taken over the whole series first, then ``mask`` selects the points, so a
    region edge does not create an artificial step.
    """
    sg = derivative or _DEFAULT_DERIVATIVE
    if sg.deriv != 1:
        raise InvalidInput("first_derivative_correlation needs a first-derivative Savitzky-Golay filter")
    aa, ba = _pair(a, b)
    return pearson(sg.apply(aa), sg.apply(ba), mask=mask)


def euclidean_distance(a: Any, b: Any, *, mask: Any = None) -> float:
    """Euclidean distance between the vector-normalised series (each scaled to unit length)."""
    aa, ba = _pair(a, b, mask)
    na, nb = math.sqrt(float(np.dot(aa, aa))), math.sqrt(float(np.dot(ba, ba)))
    if na == 0.0 or nb == 0.0:
        raise InvalidInput("cannot vector-normalise an all-zero series")
    d = aa / na - ba / nb
    return float(math.sqrt(float(np.dot(d, d))))


_DEFAULT_DERIVATIVE = SavitzkyGolay(window=9, polyorder=2, deriv=1)
