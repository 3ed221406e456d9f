"""Reference library search: rank many approved references against one spectrum in one product.

Each reference is prepared once by the comparison :class:`~service.evaluation.method.Method` and
stored as a float32 row of its metric vector (mean-centred unit rows for the correlations, unit
rows for Euclidean distance). A query is then one matrix-vector product — the dot product of two
mean-centred unit vectors *is* their Pearson r, and for unit vectors the Euclidean distance is
√(2 − 2·cos) — followed by ``argpartition`` for the top k. The search is memory-bound: it reads
the matrix once.
"""

from __future__ import annotations

import threading
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from service.evaluation.method import Method, RangeNotCovered, prepare
from service.evaluation.result import Match
from service.spectra.model import Spectrum

__all__ = ["LibraryView", "ReferenceLibrary"]

F32 = NDArray[np.float32]
_CHUNK_ROWS = 4096


@dataclass(frozen=True, eq=False)
class LibraryView:
    """The library prepared for one method: material codes and a read-only float32 matrix of metric rows."""

    method: Method
    codes: tuple[str, ...]
    matrix: F32
    skipped: tuple[str, ...] = ()  # references that do not cover the method's range

    @classmethod
    def from_vectors(cls, codes: Sequence[str], rows: NDArray[np.floating], method: Method, *,
                     normalised: bool = False) -> "LibraryView":
        """Build from rows that are already the method's vectors (``method.compared`` columns).

        Rows are made float32 and C-contiguous (without a copy when they already are), then
        mean-centred (correlation metrics) and scaled to unit length in place, a block at a time,
        unless ``normalised`` says that was done. The caller hands the array over.
        """
        if rows.ndim != 2 or rows.shape[0] != len(codes):
            raise ValueError(f"{rows.shape[0] if rows.ndim == 2 else '?'} rows for {len(codes)} material codes")
        if rows.shape[1] != method.compared.size:
            raise ValueError(f"rows have {rows.shape[1]} columns; the method compares {method.compared.size} points")
        m = np.ascontiguousarray(rows, dtype=np.float32)
        if not normalised:
            centre = method.metric != "euclidean"
            for i in range(0, m.shape[0], _CHUNK_ROWS):
                block = m[i:i + _CHUNK_ROWS]
                if centre:
                    block -= block.mean(axis=1, keepdims=True)
                norms = np.linalg.norm(block, axis=1, keepdims=True)
                norms[norms == 0] = 1.0
                block /= norms
        m.setflags(write=False)
        return cls(method=method, codes=tuple(codes), matrix=m)

    def __len__(self) -> int:
        return len(self.codes)

    @property
    def nbytes(self) -> int:
        return int(self.matrix.nbytes)

    def scores(self, vector: NDArray[np.floating]) -> NDArray[np.float32]:
        """Score of every reference: Pearson / derivative r, or Euclidean distance for ``euclidean``."""
        q = np.ascontiguousarray(vector, dtype=np.float32)
        dots = self.matrix @ q
        if self.method.metric == "euclidean":
            return np.sqrt(np.maximum(2.0 - 2.0 * dots, 0.0, out=dots), out=dots)
        return dots

    def rank(self, vector: NDArray[np.floating], *, top: int = 5) -> list[Match]:
        """The ``top`` best references, best first (highest r, or smallest distance)."""
        s = self.scores(vector)
        n = s.size
        top = max(0, min(top, n))
        if top == 0:
            return []
        key = s if self.method.metric == "euclidean" else -s
        idx = np.argpartition(key, top - 1)[:top] if top < n else np.arange(n)
        idx = idx[np.argsort(key[idx], kind="stable")]
        return [Match(rank=r + 1, material=self.codes[i], score=float(s[i]), metric=self.method.metric)
                for r, i in enumerate(idx)]

    def search(self, spectrum: Spectrum, *, top: int = 5) -> list[Match]:
        """Prepare ``spectrum`` by the view's method and rank the references against it."""
        return self.rank(prepare(spectrum, self.method).vector, top=top)


class ReferenceLibrary:
    """Approved reference spectra of many materials, searchable under any comparison method.

    Build once (:meth:`build`) and reuse: each method's :class:`LibraryView` is prepared on first
    use and kept (thread-safe), so a stream of evaluations pays the preparation once.
    """

    def __init__(self, entries: Sequence[tuple[str, Spectrum]], *, method: Method | None = None) -> None:
        self._entries = tuple((str(code), s) for code, s in entries)
        self._views: dict[Method, LibraryView] = {}
        self._lock = threading.Lock()
        self.default_method = method

    @classmethod
    def build(cls, entries: Iterable[tuple[str, Spectrum]], *, method: Method | None = None) -> "ReferenceLibrary":
        """A library of ``(material_code, spectrum)`` entries; with ``method``, its view is prepared now."""
        lib = cls(list(entries), method=method)
        if method is not None:
            lib.view(method)
        return lib

    def __len__(self) -> int:
        return len(self._entries)

    @property
    def codes(self) -> tuple[str, ...]:
        return tuple(code for code, _ in self._entries)

    def view(self, method: Method) -> LibraryView:
        """The library prepared for ``method`` (built once, then reused)."""
        with self._lock:
            found = self._views.get(method)
        if found is not None:
            return found
        rows = np.empty((len(self._entries), method.compared.size), dtype=np.float32)
        codes: list[str] = []
        skipped: list[str] = []
        for code, s in self._entries:
            try:
                rows[len(codes)] = prepare(s, method).vector
            except RangeNotCovered:
                skipped.append(code)
                continue
            codes.append(code)
        view = LibraryView.from_vectors(codes, rows[: len(codes)], method, normalised=True)
        built = LibraryView(method=method, codes=view.codes, matrix=view.matrix, skipped=tuple(skipped))
        with self._lock:
            return self._views.setdefault(method, built)

    def search(self, spectrum: Spectrum, *, top: int = 5, method: Method | None = None) -> list[Match]:
        """Rank the references against ``spectrum`` (by ``method``, or the method the library was built with)."""
        m = method or self.default_method
        if m is None:
            raise ValueError("give a method, or build the library with one")
        return self.view(m).search(spectrum, top=top)
