"""Sampling plans: WHO TRS 929 Annex 4 n/p/r plans (factors from memory, see docs/records.md)."""

from __future__ import annotations

import math

import pytest

from service.release import PlanKind, compute_plan, plan_sizes


# Check values worked by hand from WHO TRS 929 Annex 4 (n = 1 + sqrt N, p = 0.4 sqrt N,
# r = 1.5 sqrt N, each rounded up; factors from memory), capped at N.
@pytest.mark.parametrize(("containers", "n", "p", "r"), [
    (1, 1, 1, 1),      # n = 2, r = 2 capped at the one container
    (2, 2, 1, 2),      # n = 2.41 -> 3 capped at 2; p = 0.57 -> 1; r = 2.12 -> 3 capped at 2
    (4, 3, 1, 3),      # sqrt 4 = 2 exactly: no rounding up past a whole number
    (10, 5, 2, 5),     # 4.16 -> 5, 1.26 -> 2, 4.74 -> 5
    (25, 6, 2, 8),     # 6, 2, 7.5 -> 8
    (100, 11, 4, 15),  # 11, 4, 15
    (101, 12, 5, 16),  # 11.05 -> 12, 4.02 -> 5, 15.07 -> 16
])
def test_plan_sizes_who_trs_929_annex_4(containers: int, n: int, p: int, r: int) -> None:
    assert plan_sizes(containers) == (n, p, r)


def _slow_oracle(containers: int) -> tuple[int, int, int]:
    root = containers ** 0.5
    return tuple(min(containers, math.ceil(f(root) - 1e-9)) for f in
                 (lambda s: 1 + s, lambda s: 0.4 * s, lambda s: 1.5 * s))  # type: ignore[return-value]


def test_plan_sizes_match_an_obvious_oracle_for_every_n_to_2000() -> None:
    for containers in range(1, 2001):
        assert plan_sizes(containers) == _slow_oracle(containers), containers


def test_without_reduced_plan_every_container_is_tested() -> None:
    plan = compute_plan(containers=30, reduced_plan_allowed=False, seed="IN-2026-00001")
    assert plan.kind is PlanKind.every_container
    assert plan.to_test == 30 and plan.selected == tuple(range(1, 31))
    assert "every container" in plan.reason


def test_reduced_plan_tests_n_containers_chosen_reproducibly() -> None:
    a = compute_plan(containers=30, reduced_plan_allowed=True, seed="IN-2026-00001")
    b = compute_plan(containers=30, reduced_plan_allowed=True, seed="IN-2026-00001")
    c = compute_plan(containers=30, reduced_plan_allowed=True, seed="IN-2026-00002")
    assert a.kind is PlanKind.n_plan and a.to_test == 7 == len(a.selected)  # 1 + sqrt 30 = 6.48 -> 7
    assert a.selected == b.selected and a.selected != c.selected
    assert list(a.selected) == sorted(set(a.selected)) and all(1 <= i <= 30 for i in a.selected)


def test_reduced_plan_that_covers_all_containers_says_so() -> None:
    plan = compute_plan(containers=3, reduced_plan_allowed=True)
    assert plan.kind is PlanKind.every_container and plan.to_test == 3


@pytest.mark.parametrize("bad", [0, -1, 10_001])
def test_container_count_out_of_range_is_refused(bad: int) -> None:
    with pytest.raises(ValueError, match="containers"):
        compute_plan(containers=bad, reduced_plan_allowed=False)


def test_plan_as_dict_is_json_ready() -> None:
    d = compute_plan(containers=9, reduced_plan_allowed=True, seed="x").as_dict()
    assert d["kind"] == "n_plan" and d["n"] == 4 and d["p"] == 2 and d["r"] == 5 and len(d["selected"]) == 4
