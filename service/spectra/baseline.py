"""Baseline correction: asymmetric least squares, arPLS (both via pybaselines) and rubber band.

Each function takes the values (and, for the rubber band, the wavenumbers), leaves them untouched
and returns a :class:`BaselineResult` with the estimated baseline, the corrected values, the
method's parameters and whether the iteration converged, so the step can be recorded and re-run.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import NDArray
from pybaselines import Baseline
from scipy.spatial import ConvexHull, QhullError

from service.errors import InvalidInput


@dataclass(frozen=True)
class BaselineResult:
    """The baseline, the corrected values (values − baseline) and the evidence of how they were found."""

    baseline: NDArray[np.float64]
    corrected: NDArray[np.float64]
    method: str
    params: dict[str, Any]
    iterations: int
    converged: bool

    def as_dict(self) -> dict[str, Any]:
        return {"method": self.method, "params": dict(self.params), "iterations": self.iterations,
                "converged": self.converged}


_local = threading.local()


def _fitter(n: int) -> Baseline:
    """A pybaselines fitter for series of ``n`` points, one per thread and length: reusing it saves
    ~0.2 ms a call; a fitter is bound to the first length it sees and keeps per-call state, so it
    is neither shared between threads nor used for another length."""
    cache: dict[int, Baseline] | None = getattr(_local, "fitters", None)
    if cache is None:
        cache = _local.fitters = {}
    fitter = cache.get(n)
    if fitter is None:
        if len(cache) >= 8:
            cache.clear()
        fitter = cache[n] = Baseline(check_finite=False)  # _values has checked already
    return fitter


try:  # pentapy is a declared dependency; without it pybaselines falls back to scipy's banded solvers
    from pentapy.solver import penta_solver2 as _penta_solve
except ImportError:  # pragma: no cover - only in a broken installation
    _penta_solve = None

_EPS = float(np.finfo(float).eps)  # pybaselines' floor under the norm in its convergence test


@lru_cache(maxsize=16)
def _second_difference_penalty(n: int, lam: float) -> NDArray[np.float64]:
    """``lam · DᵀD`` for the second-difference matrix ``D`` of ``n`` points, as pentapy's five row-wise bands.

    Rows: second and first upper diagonals (zero-padded at the end), the main diagonal, first and
    second lower diagonals (zero-padded at the start); the matrix is symmetric. Read-only, cached
    per (n, lam): the least-squares fit pays for it once per grid instead of once per spectrum.
    """
    main = np.full(n, 6.0)
    main[[0, -1]] = 1.0
    main[[1, -2]] = 5.0
    first = np.full(n - 1, -4.0)
    first[[0, -1]] = -2.0
    bands = np.zeros((5, n))
    bands[0, :-2] = bands[4, 2:] = 1.0
    bands[1, :-1] = bands[3, 1:] = first
    bands[2] = main
    out = lam * bands
    out.setflags(write=False)
    return out


def asls_second_difference(y: NDArray[np.float64], *, lam: float, p: float, max_iter: int = 50,
                           tol: float = 1e-3) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Asymmetric least squares (Eilers & Boelens 2005) with a second-difference penalty.

    The same iteration as pybaselines' ``Baseline.asls`` (diff_order=2, pentapy's PTRANS-II
    solver): solve ``(W + lam·DᵀD) z = W y``, reweight ``p`` above ``z`` and ``1 − p`` below,
    stop when the relative change of the weights falls below ``tol`` (at most ``max_iter + 1``
    solves). The penalty bands are cached per length and ``lam`` and the solver is called
    directly, so a call costs the solves and little else. Returns ``(baseline, tol_history)``;
    ``y`` must be 1-D, finite float64 with at least 4 points (checked by the callers).
    """
    penalty = _second_difference_penalty(y.size, float(lam))
    if _penta_solve is None:  # pragma: no cover
        from pybaselines import Baseline

        base, info = Baseline(check_finite=False).asls(y, lam=lam, p=p, max_iter=max_iter, tol=tol)
        return np.asarray(base, dtype=np.float64), np.asarray(info["tol_history"], dtype=np.float64)
    ya = np.ascontiguousarray(y, dtype=np.float64)
    main = penalty[2]
    lhs = penalty.copy()
    weights = np.ones(ya.size)
    history = np.empty(max_iter + 1)
    above, below = p, 1 - p
    for i in range(max_iter + 1):
        np.add(main, weights, out=lhs[2])
        try:
            baseline = np.asarray(_penta_solve(lhs, weights * ya))
        except ZeroDivisionError:  # as pentapy.solve: a singular system gives NaN, not an exception
            baseline = np.full(ya.size, np.nan)
        new = np.where(ya > baseline, above, below)
        change = new - weights
        history[i] = np.sqrt(change.dot(change)) / max(np.sqrt(weights.dot(weights)), _EPS)
        if history[i] < tol:
            break
        weights = new
    return baseline, history[: i + 1]


def _values(y: Any) -> NDArray[np.float64]:
    ya = np.asarray(y, dtype=np.float64)
    if ya.ndim != 1 or ya.size < 4 or not np.all(np.isfinite(ya)):
        raise InvalidInput(f"baseline correction needs a 1-D series of at least 4 finite values; got shape {ya.shape}")
    return ya


def _result(ya: NDArray[np.float64], base: Any, method: str, params: dict[str, Any], info: dict[str, Any],
            tol: float) -> BaselineResult:
    # pybaselines records one relative change per weighting pass (up to max_iter + 1 passes);
    # converged means the last change fell below tol.
    baseline = np.asarray(base, dtype=np.float64)
    history = np.asarray(info.get("tol_history", ()), dtype=np.float64)
    iterations = int(history.size)
    converged = bool(iterations and history[-1] < tol)
    return BaselineResult(baseline=baseline, corrected=ya - baseline, method=method, params=params,
                          iterations=iterations, converged=converged)


def baseline_asls(y: Any, *, lam: float = 1e5, p: float = 0.01, max_iter: int = 50,
                  tol: float = 1e-3, diff_order: int = 2) -> BaselineResult:
    """Asymmetric least squares baseline (Eilers & Boelens 2005), via ``pybaselines``.

    A smooth curve (second-difference penalty ``lam``) is fitted with weight ``p`` for points
    above it and ``1 - p`` below, so it follows the lower envelope under the bands. With the usual
    second-difference penalty it runs :func:`asls_second_difference` (pybaselines' iteration on a
    cached penalty, pentapy's solver); other orders go through pybaselines.

    References
    ----------
    P. H. C. Eilers, H. F. M. Boelens, "Baseline correction with asymmetric least squares
    smoothing", Leiden University Medical Centre report (2005).
    """
    ya = _values(y)
    if not (0 < p < 1) or lam <= 0 or max_iter < 1:
        raise InvalidInput(f"asymmetric least squares needs 0 < p < 1, lam > 0, max_iter >= 1 (got p={p}, lam={lam})")
    if diff_order == 2:
        base, history = asls_second_difference(ya, lam=lam, p=p, max_iter=max_iter, tol=tol)
        info: dict[str, Any] = {"tol_history": history}
    else:
        base, info = _fitter(ya.size).asls(ya, lam=lam, p=p, max_iter=max_iter, tol=tol, diff_order=diff_order)
    params = {"lam": lam, "p": p, "max_iter": max_iter, "tol": tol, "diff_order": diff_order}
    return _result(ya, base, "asymmetric least squares", params, info, tol)


def baseline_arpls(y: Any, *, lam: float = 1e5, max_iter: int = 50, tol: float = 1e-3,
                   diff_order: int = 2) -> BaselineResult:
    """Asymmetrically reweighted penalized least squares (Baek et al. 2015), via ``pybaselines``.

    Weights come from a logistic function of the residuals, so no ``p`` is needed; it can take
    many iterations (11-28 ms) and may not converge: ``max_iter`` bounds it and ``converged``
    says whether it did.

    References
    ----------
    S.-J. Baek, A. Park, Y.-J. Ahn, J. Choo, "Baseline correction using asymmetrically
    reweighted penalized least squares smoothing", Analyst 140 (2015) 250-257.
    """
    ya = _values(y)
    if lam <= 0 or max_iter < 1:
        raise InvalidInput(f"arPLS needs lam > 0 and max_iter >= 1 (got lam={lam}, max_iter={max_iter})")
    base, info = _fitter(ya.size).arpls(ya, lam=lam, max_iter=max_iter, tol=tol, diff_order=diff_order)
    params = {"lam": lam, "max_iter": max_iter, "tol": tol, "diff_order": diff_order}
    return _result(ya, base, "arPLS", params, info, tol)


def baseline_rubberband(x: Any, y: Any) -> BaselineResult:
    """Rubber-band baseline: the lower convex hull of the points, interpolated linearly.

    A band stretched under the spectrum from end to end (common practice for absorbance
    spectra with a convex, scattering baseline). Points lying above the chord of their current
    neighbours can never be on the lower hull; they are removed in vectorised passes, and the
    survivors go to ``scipy.spatial.ConvexHull`` (qhull), whose vertices on or below the chord
    from the first to the last point form the lower hull.
    """
    xa = np.asarray(x, dtype=np.float64)
    ya = _values(y)
    if xa.shape != ya.shape or np.any(np.diff(xa) <= 0):
        raise InvalidInput("rubber-band baseline needs an ascending axis with one value per point")
    keep = _lower_hull(xa, ya)
    base = np.interp(xa, xa[keep], ya[keep])
    return BaselineResult(baseline=base, corrected=ya - base, method="rubber band", params={},
                          iterations=1, converged=True)


def _lower_hull(x: NDArray[np.float64], y: NDArray[np.float64]) -> NDArray[np.intp]:
    """Indices of the lower convex hull of (x, y), x strictly ascending, in ascending order."""
    idx = np.arange(x.size)
    xs, ys = x, y
    for _ in range(32):
        if idx.size <= 2:
            break
        # cross product >= 0: the middle point is on or below the chord (convex turn) -> candidate
        dx_l, dy_l = xs[1:-1] - xs[:-2], ys[1:-1] - ys[:-2]
        keep = np.empty(idx.size, dtype=bool)
        keep[0] = keep[-1] = True
        np.greater_equal(dx_l * (ys[2:] - ys[:-2]), dy_l * (xs[2:] - xs[:-2]), out=keep[1:-1])
        before = idx.size
        idx, xs, ys = idx[keep], xs[keep], ys[keep]
        if idx.size > 0.8 * before:  # few removed: qhull below finishes faster
            break
    if idx.size <= 3:
        return idx
    # finish with qhull on the survivors (y scaled to the x span so the hull is well conditioned)
    xs, ys = x[idx], y[idx]
    span = float(ys.max() - ys.min())
    if span == 0.0:
        return idx[[0, -1]]
    ys = (ys - ys.min()) * (float(xs[-1] - xs[0]) / span)
    try:
        v = np.unique(ConvexHull(np.column_stack([xs, ys])).vertices)
    except QhullError:  # all points on one line
        return idx[[0, -1]]
    chord = ys[0] + (ys[-1] - ys[0]) * (xs[v] - xs[0]) / (xs[-1] - xs[0])
    lower = v[ys[v] <= chord + 1e-9 * float(xs[-1] - xs[0])]
    hull = np.union1d(lower, [0, idx.size - 1])
    return idx[hull]
