"""`bandgate bench`: times the project's own hot paths on generated data.

Every module in this package that defines ``cases() -> list[BenchCase]`` contributes figures;
adding a benchmark is adding a module. Each case runs its function several times and reports
the median (and p10/p90); a case may also report derived figures (ratios, throughput) through
``extra``, computed from the medians of other cases in the same run.
"""

from __future__ import annotations

import importlib
import pkgutil
import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class BenchCase:
    """One timed operation. `setup` runs once and returns the argument passed to `run`."""

    name: str
    run: Callable[[Any], Any]
    setup: Callable[[], Any] = lambda: None
    repeats: int = 20
    aim: str = ""  # the figure the issue asks for, shown beside the result
    unit_scale: float = 1e3  # seconds -> milliseconds


@dataclass
class BenchResult:
    name: str
    median_ms: float
    p10_ms: float
    p90_ms: float
    repeats: int
    aim: str = ""
    extra: dict[str, Any] = field(default_factory=dict)

    def as_dict(self) -> dict[str, Any]:
        return {
            "name": self.name, "median_ms": round(self.median_ms, 4), "p10_ms": round(self.p10_ms, 4),
            "p90_ms": round(self.p90_ms, 4), "repeats": self.repeats, "aim": self.aim, **self.extra,
        }


@dataclass(frozen=True)
class BenchReport:
    """A free-form result (e.g. an HTTP load run) that is not a single timed call."""

    name: str
    figures: dict[str, Any]
    aim: str = ""


def time_case(case: BenchCase) -> BenchResult:
    arg = case.setup()
    case.run(arg)  # warm-up
    samples = []
    for _ in range(case.repeats):
        t0 = time.perf_counter()
        case.run(arg)
        samples.append((time.perf_counter() - t0) * case.unit_scale)
    samples.sort()
    q = statistics.quantiles(samples, n=10) if len(samples) >= 2 else [samples[0]] * 9
    return BenchResult(case.name, statistics.median(samples), q[0], q[-1], case.repeats, case.aim)


def discover(only: str | None = None) -> list[tuple[str, Any]]:
    """(module name, module) for every bench module, optionally filtered by a substring."""
    found = []
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
        if info.name.startswith("_") or (only and only not in info.name):
            continue
        found.append((info.name, importlib.import_module(f"{__name__}.{info.name}")))
    return found
