"""The record's JSON-safe conversion: the fast type dispatch gives what the plain isinstance rules give."""

from __future__ import annotations

import enum
import math
from typing import Any

import numpy as np
import pytest

from service.evaluation.result import json_safe


def _json_safe_oracle(value: Any) -> Any:
    """The rules written out once, slowly: isinstance checks in order, every float through its 6-digit text."""
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float) or hasattr(value, "dtype"):
        try:
            v = float(value)
        except (TypeError, ValueError):
            return str(value)
        return float(f"{v:.6g}") if math.isfinite(v) else None
    if isinstance(value, dict):
        return {str(k): _json_safe_oracle(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_safe_oracle(v) for v in value]
    return str(value)


class _Kind(str, enum.Enum):
    absorbance = "absorbance"


class _Level(enum.IntEnum):
    high = 3


class _Ratio(float):
    pass


def _same(a: Any, b: Any) -> bool:
    """Equal, with equal types all the way down (1 == 1.0 == True would hide a changed record)."""
    if type(a) is not type(b):
        return False
    if isinstance(a, dict):
        return list(a) == list(b) and all(_same(a[k], b[k]) for k in a)
    if isinstance(a, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b))
    return bool(a == b)


ODD_VALUES: list[Any] = [
    None, True, False, 0, -7, 2**70, "text", "", 0.1234567891, -1e-300, 1e300, 123456789.0, float("nan"),
    float("inf"), -float("inf"), np.float64(0.98765432), np.float32(1.5), np.int64(4), np.bool_(True),
    np.array(2.5), np.array([1.0, 2.0]), _Kind.absorbance, _Level.high, _Ratio(0.333333333), object,
    (1, 2.000001), [], {}, {1: "a", (2, 3): 4.0}, {"nested": [{"x": (0.1, float("nan"))}, [np.float64(-0.0)]]},
]


@pytest.mark.parametrize("value", ODD_VALUES, ids=lambda v: type(v).__name__)
def test_json_safe_matches_the_isinstance_rules(value: Any) -> None:
    assert _same(json_safe(value), _json_safe_oracle(value))


@pytest.mark.parametrize("seed", range(5))
def test_json_safe_matches_the_isinstance_rules_on_random_records(seed: int) -> None:
    rng = np.random.default_rng(seed)

    def leaf() -> Any:
        pick = int(rng.integers(8))
        v = float(rng.normal() * 10.0 ** int(rng.integers(-8, 9)))
        return [v, np.float64(v), int(rng.integers(-99, 99)), bool(rng.integers(2)), None, "label",
                float("nan"), (v, v)][pick]

    def tree(depth: int) -> Any:
        if depth == 0 or rng.random() < 0.3:
            return leaf()
        if rng.random() < 0.5:
            return {f"k{i}": tree(depth - 1) for i in range(int(rng.integers(1, 5)))}
        return [tree(depth - 1) for _ in range(int(rng.integers(0, 5)))]

    for _ in range(50):
        record = tree(4)
        assert _same(json_safe(record), _json_safe_oracle(record))
