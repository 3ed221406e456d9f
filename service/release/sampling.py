"""Sampling plans for incoming containers (WHO TRS 929 Annex 4).

The three plans of WHO TRS 929 Annex 4 (factors *from memory*, see ``docs/records.md``):

* n-plan: n = 1 + sqrt(N), rounded up -- containers to sample and test for identity;
* p-plan: p = 0.4 * sqrt(N), rounded up -- containers to pool for a composite sample;
* r-plan: r = 1.5 * sqrt(N), rounded up -- containers to sample for suspect or variable material.

N is the number of containers received. EU GMP Annex 8 asks that the identity of the contents of
*each* container is assured; fewer containers than all may be tested only under a validated
procedure. Bandgate therefore tests every container unless the material's approved-supplier link
carries the reduced-plan flag, in which case the n-plan decides how many are tested.
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass
from enum import Enum

MAX_CONTAINERS = 10_000


class PlanKind(str, Enum):
    every_container = "every_container"
    n_plan = "n_plan"


@dataclass(frozen=True, kw_only=True)
class SamplingPlan:
    """How many of the N received containers are tested, which ones, and why."""

    containers_received: int
    kind: PlanKind
    n: int
    p: int
    r: int
    to_test: int
    selected: tuple[int, ...]  # container numbers, 1-based, ascending
    reason: str

    def as_dict(self) -> dict[str, object]:
        return {
            "containers_received": self.containers_received,
            "kind": self.kind.value,
            "n": self.n,
            "p": self.p,
            "r": self.r,
            "to_test": self.to_test,
            "selected": list(self.selected),
            "reason": self.reason,
        }


def _ceil(value: float) -> int:
    # Guard against 1.0000000000000002-style noise when sqrt(N) is a whole number.
    return math.ceil(round(value, 9))


def plan_sizes(containers: int) -> tuple[int, int, int]:
    """Return (n, p, r) for N containers, each rounded up and capped at N (WHO TRS 929 Annex 4)."""
    if containers < 1:
        raise ValueError("a lot has at least one container")
    root = math.sqrt(containers)
    n = min(containers, _ceil(1 + root))
    p = min(containers, _ceil(0.4 * root))
    r = min(containers, _ceil(1.5 * root))
    return n, p, r


def compute_plan(*, containers: int, reduced_plan_allowed: bool, seed: str = "") -> SamplingPlan:
    """Compute the sampling plan for a lot of ``containers`` containers.

    Parameters
    ----------
    containers
        N, the number of containers received (1..10,000).
    reduced_plan_allowed
        True only when the approved-supplier link for this material allows a reduced plan
        (a validated procedure, EU GMP Annex 8); otherwise every container is tested.
    seed
        Makes the random choice of containers reproducible (the lot code is used), so the
        stored plan can be recomputed and checked.
    """
    if not isinstance(containers, int) or isinstance(containers, bool):
        raise TypeError("containers must be an int")
    if not 1 <= containers <= MAX_CONTAINERS:
        raise ValueError(f"containers must be between 1 and {MAX_CONTAINERS}, not {containers}")
    n, p, r = plan_sizes(containers)
    if reduced_plan_allowed and n < containers:
        chosen = sorted(random.Random(f"bandgate-sampling:{seed}").sample(range(1, containers + 1), n))
        return SamplingPlan(
            containers_received=containers, kind=PlanKind.n_plan, n=n, p=p, r=r, to_test=n,
            selected=tuple(chosen),
            reason=(f"supplier approved for a reduced plan: n = 1 + sqrt({containers}) rounded up = {n} "
                    f"containers chosen at random (WHO TRS 929 Annex 4 n-plan)"),
        )
    why = ("supplier not approved for a reduced plan: every container is tested (EU GMP Annex 8)"
           if not reduced_plan_allowed else
           f"the n-plan ({n}) covers every one of the {containers} containers")
    return SamplingPlan(
        containers_received=containers, kind=PlanKind.every_container, n=n, p=p, r=r,
        to_test=containers, selected=tuple(range(1, containers + 1)), reason=why,
    )
