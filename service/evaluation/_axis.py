"""What the evaluator needs to know about a sample's wavenumber axis, worked out once per axis.

An instrument writes the same axis into every file it exports, so a stream of uploads shares it:
the median spacing and the index ranges the quality checks read (the evaluated range less its
exclusions, the noise region, the water-vapour region) depend on the axis and the method alone.
They are kept in small bounded caches keyed by the SHA-256 of the axis values (taken while the
spectrum's data digest is computed, so the key costs nothing extra) and, for the index ranges, by
the :class:`~service.evaluation.method.Method` too. A different axis, or a different method, is a
different key; nothing is ever looked up by object identity or by position.

The data digest itself (SHA-256 of the kind, x, then y) starts with the axis: the hash state after
the kind and x is remembered too (:func:`axis_hash`), and taken up again only for an axis whose
values are the remembered ones bit for bit, so a repeated axis costs a comparison, not a hash.
"""

from __future__ import annotations

import hashlib
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from dataclasses import dataclass
from typing import Any, TypeVar

import numpy as np
from numpy.typing import NDArray

__all__ = ["QualityPlan", "axis_hash", "axis_spacing", "clear", "make_quality_plan", "median", "quality_plan"]

_SIZE = 32
T = TypeVar("T")


class _Bounded:
    """A small thread-safe LRU map; ``get(key, make)`` builds a missing entry outside the lock."""

    def __init__(self, size: int) -> None:
        self._size = size
        self._items: OrderedDict[Hashable, Any] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: Hashable, make: Callable[[], T]) -> T:
        with self._lock:
            if key in self._items:
                self._items.move_to_end(key)
                return self._items[key]  # type: ignore[no-any-return]
        value = make()
        with self._lock:
            self._items[key] = value
            while len(self._items) > self._size:
                self._items.popitem(last=False)
        return value

    def peek(self, key: Hashable) -> Any:
        """The entry under ``key`` (marked recently used), or None."""
        with self._lock:
            if key in self._items:
                self._items.move_to_end(key)
                return self._items[key]
        return None

    def put(self, key: Hashable, value: Any) -> None:
        with self._lock:
            self._items[key] = value
            self._items.move_to_end(key)
            while len(self._items) > self._size:
                self._items.popitem(last=False)

    def clear(self) -> None:
        with self._lock:
            self._items.clear()

    def __len__(self) -> int:
        return len(self._items)


_spacings = _Bounded(_SIZE)
_plans = _Bounded(_SIZE)
_hashes = _Bounded(_SIZE)


@dataclass(frozen=True, eq=False)
class _AxisHash:
    bits: NDArray[np.uint64]  # the axis values as little-endian float64 bit patterns (read-only copy)
    state: Any  # hashlib SHA-256 object after the kind and the axis; only ever copied
    key: bytes  # its digest: the axis key


def axis_hash(kind: str, x: NDArray[np.float64]) -> tuple[Any, bytes]:
    """(a SHA-256 object that has taken ``kind`` (UTF-8) and then ``x`` as little-endian float64, its digest).

    The object is new to the caller, who goes on to feed it the values. The state is remembered per
    (kind, length, first and last value), and used only when the whole axis equals the remembered
    one bit for bit; otherwise the axis is hashed (and remembered) afresh.
    """
    xa = np.ascontiguousarray(x, dtype="<f8")
    bits = xa.view(np.uint64)
    probe = (kind, xa.size, bits[0].item(), bits[-1].item()) if xa.size else None
    found: _AxisHash | None = _hashes.peek(probe) if probe is not None else None
    if found is not None and np.array_equal(found.bits, bits):
        return found.state.copy(), found.key
    h = hashlib.sha256(kind.encode())
    h.update(xa)
    key = h.digest()
    if probe is not None:
        kept = bits.copy()
        kept.setflags(write=False)
        _hashes.put(probe, _AxisHash(bits=kept, state=h.copy(), key=key))
    return h, key


def median(values: NDArray[np.float64]) -> float:
    """``float(np.median(values))`` for a 1-D float array, by one partition (the same arithmetic)."""
    n = values.size
    half = n // 2
    if n % 2:
        return float(np.partition(values, half)[half])
    part = np.partition(values, (half - 1, half))
    return float((part[half - 1] + part[half]) / 2.0)


def axis_spacing(key: bytes | None, x: NDArray[np.float64]) -> float:
    """Median point spacing of the axis ``x`` (cm⁻¹); remembered under ``key`` (None: not remembered)."""
    if key is None:
        return median(np.diff(x))
    return _spacings.get(key, lambda: median(np.diff(x)))


@dataclass(frozen=True, kw_only=True)
class QualityPlan:
    """Index ranges of one axis that the quality checks read, for one method.

    ``highest``: indices of the points in the evaluated range outside the excluded intervals (an
    excluded interval's own end points count as inside), ascending. ``noise``: ``(i0, i1)`` of the
    noise region, or None when the method's range does not hold it or it has fewer than 10 points.
    ``vapour``: ``(i0, i1, window)`` of the water-vapour region and the Savitzky–Golay window
    spanning about 25 cm⁻¹, or None when it cannot be measured (too few points, too coarse).
    """

    highest: NDArray[np.intp]
    noise: tuple[int, int] | None
    vapour: tuple[int, int, int] | None


def _highest_indices(x: NDArray[np.float64], lo: float, hi: float,
                     excluded: tuple[tuple[float, float], ...]) -> NDArray[np.intp]:
    edges = sorted((a, b) for a, b in excluded if b > lo and a < hi)
    parts, start = [], lo
    for a, b in edges + [(hi, hi)]:
        i0, i1 = int(np.searchsorted(x, start)), int(np.searchsorted(x, a, side="right"))
        if i1 > i0:
            parts.append(np.arange(i0, i1))
        start = max(start, b)
    out = np.concatenate(parts) if parts else np.zeros(0, dtype=np.intp)
    out.setflags(write=False)
    return out


def _range(x: NDArray[np.float64], lo: float, hi: float) -> tuple[int, int]:
    return int(np.searchsorted(x, lo)), int(np.searchsorted(x, hi, side="right"))


def make_quality_plan(x: NDArray[np.float64], *, lo: float, hi: float, excluded: tuple[tuple[float, float], ...],
                      noise_region: tuple[float, float], vapour_region: tuple[float, float]) -> QualityPlan:
    """The plan for axis ``x`` and a method's range ``lo``–``hi`` with its ``excluded`` intervals."""
    noise: tuple[int, int] | None = None
    n_lo, n_hi = noise_region
    if n_lo >= lo and n_hi <= hi:
        i0, i1 = _range(x, n_lo, n_hi)
        noise = (i0, i1) if i1 - i0 >= 10 else None
    vapour: tuple[int, int, int] | None = None
    i0, i1 = _range(x, max(vapour_region[0], lo), min(vapour_region[1], hi))
    if i1 - i0 >= 30:
        step = float(x[i1 - 1] - x[i0]) / (i1 - i0 - 1)
        window = max(5, int(round(25.0 / step)) | 1)
        if window < i1 - i0 and step <= 8.0:
            vapour = (i0, i1, window)
    return QualityPlan(highest=_highest_indices(x, lo, hi, excluded), noise=noise, vapour=vapour)


def quality_plan(key: bytes | None, x: NDArray[np.float64], method: Any, *, noise_region: tuple[float, float],
                 vapour_region: tuple[float, float]) -> QualityPlan:
    """:func:`make_quality_plan` for ``method``, remembered under (axis key, method, regions) unless ``key`` is None."""
    def make() -> QualityPlan:
        return make_quality_plan(x, lo=method.lo, hi=method.hi, excluded=method.excluded,
                                 noise_region=noise_region, vapour_region=vapour_region)

    if key is None:
        return make()
    return _plans.get((key, method, noise_region, vapour_region), make)


def clear() -> None:
    """Forget every remembered axis (tests; the caches are bounded in any case)."""
    _spacings.clear()
    _plans.clear()
    _hashes.clear()
