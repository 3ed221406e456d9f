"""A recorded chain of preprocessing steps: ``run_steps(x, y, steps) -> Processed``.

Each :class:`~service.spectra.preprocess.Step` names one pure function and its parameters; the
result keeps the steps (with every default filled in) and, for baselines, the diagnostics, so
the processed data can be re-made from the original and the record.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from numpy.typing import NDArray

from service.errors import InvalidInput
from service.spectra import baseline as _bl
from service.spectra import preprocess as _pp
from service.spectra.smoothing import SavitzkyGolay

Arrays = tuple[NDArray[np.float64], NDArray[np.float64]]


@dataclass(frozen=True)
class Processed:
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    steps: tuple[_pp.Step, ...]
    diagnostics: tuple[dict[str, Any], ...] = ()

    def as_dict(self) -> dict[str, Any]:
        return {"steps": [s.as_dict() for s in self.steps], "diagnostics": list(self.diagnostics)}


@lru_cache(maxsize=64)
def _sg(window: int, polyorder: int, deriv: int) -> SavitzkyGolay:
    return SavitzkyGolay(window=window, polyorder=polyorder, deriv=deriv)


def _spacing(x: NDArray[np.float64]) -> float:
    d = np.diff(x)
    if d.size and float(d.max() - d.min()) > 1e-6 * float(abs(d.mean())):
        raise InvalidInput("Savitzky-Golay needs evenly spaced points: add a 'resample' step first")
    return float(d.mean())


def _crop(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
    lo, hi = float(p["lo"]), float(p["hi"])
    return _pp.crop(x, y, lo=lo, hi=hi), {"lo": lo, "hi": hi}, {}


def _resample(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
    lo, hi, sp = float(p["lo"]), float(p["hi"]), float(p["spacing"])
    grid = _pp.uniform_grid(lo, hi, sp)
    return (grid, _pp.resample(x, y, grid)), {"lo": lo, "hi": hi, "spacing": sp}, {}


def _baseline(kind: str) -> Callable[..., tuple[Arrays, dict[str, Any], dict[str, Any]]]:
    def run(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
        if kind == "rubberband":
            res = _bl.baseline_rubberband(x, y)
        elif kind == "asls":
            res = _bl.baseline_asls(y, **p)
        else:
            res = _bl.baseline_arpls(y, **p)
        return (np.asarray(x, dtype=np.float64), res.corrected), dict(res.params), res.as_dict()
    return run


def _savgol(deriv_default: int) -> Callable[..., tuple[Arrays, dict[str, Any], dict[str, Any]]]:
    def run(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
        w, po = int(p.get("window", 9)), int(p.get("polyorder", 2))
        d = int(p.get("deriv", deriv_default))
        xa = np.asarray(x, dtype=np.float64)
        out = _sg(w, po, d).apply(y, dx=_spacing(xa))
        return (xa, out), {"window": w, "polyorder": po, "deriv": d}, {}
    return run


def _simple(fn: Callable[[Any], NDArray[np.float64]]) -> Callable[..., tuple[Arrays, dict[str, Any], dict[str, Any]]]:
    def run(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
        return (np.asarray(x, dtype=np.float64), fn(y)), {}, {}
    return run


def _atr(x: Any, y: Any, p: dict[str, Any]) -> tuple[Arrays, dict[str, Any], dict[str, Any]]:
    ref = float(p.get("reference_cm1", 1000.0))
    return (np.asarray(x, dtype=np.float64), _pp.atr_correct(x, y, reference_cm1=ref)), {"reference_cm1": ref}, {}


STEPS: dict[str, Callable[..., tuple[Arrays, dict[str, Any], dict[str, Any]]]] = {
    "crop": _crop,
    "resample": _resample,
    "baseline_asls": _baseline("asls"),
    "baseline_arpls": _baseline("arpls"),
    "baseline_rubberband": _baseline("rubberband"),
    "smooth": _savgol(0),
    "derivative": _savgol(1),
    "normalise_vector": _simple(_pp.normalise_vector),
    "normalise_snv": _simple(_pp.normalise_snv),
    "normalise_minmax": _simple(_pp.normalise_minmax),
    "atr_correct": _atr,
}


def run_steps(x: Any, y: Any, steps: Sequence[_pp.Step]) -> Processed:
    """Apply ``steps`` in order to (x, y); inputs are not modified.

    Step names: ``crop`` (lo, hi), ``resample`` (lo, hi, spacing), ``baseline_asls`` (lam, p,
    max_iter, tol), ``baseline_arpls`` (lam, max_iter, tol), ``baseline_rubberband``, ``smooth``
    and ``derivative`` (window, polyorder[, deriv]), ``normalise_vector``, ``normalise_snv``,
    ``normalise_minmax``, ``atr_correct`` (reference_cm1).
    """
    xa = np.asarray(x, dtype=np.float64)
    ya = np.asarray(y, dtype=np.float64)
    done: list[_pp.Step] = []
    diags: list[dict[str, Any]] = []
    for i, step in enumerate(steps):
        fn = STEPS.get(step.name)
        if fn is None:
            raise InvalidInput(f"steps[{i}]: unknown preprocessing step {step.name!r}; known: {', '.join(STEPS)}")
        try:
            (xa, ya), params, diag = fn(xa, ya, dict(step.params))
        except (KeyError, TypeError) as exc:
            raise InvalidInput(f"steps[{i}] ({step.name}): missing or wrong parameter {exc}") from None
        done.append(_pp.Step(step.name, params))
        if diag:
            diags.append({"step": i, **diag})
    return Processed(x=xa, y=ya, steps=tuple(done), diagnostics=tuple(diags))
