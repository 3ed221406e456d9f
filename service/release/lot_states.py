"""The life of a lot: its states and the only steps allowed between them.

A computed pass never releases a lot: release is a separate, signed step by the quality unit
(21 CFR 211.84, 211.194; EU GMP Part I ch. 5). The state names are plain words of our own.

::

    quarantine --first_measurement--> testing
    testing --all_passed--> awaiting_disposition --qa_released--> released
                                                 --qa_rejected--> rejected
    testing --failure_found--> awaiting_review --review_rejected--> rejected
                                               --measurement_invalidated--> testing  (retest)
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

from service.errors import Conflict


class LotState(str, Enum):
    quarantine = "quarantine"
    testing = "testing"
    awaiting_disposition = "awaiting_disposition"
    awaiting_review = "awaiting_review"
    released = "released"
    rejected = "rejected"

    @property
    def label(self) -> str:
        return STATE_LABELS[self]

    @property
    def is_final(self) -> bool:
        return self in (LotState.released, LotState.rejected)

    @property
    def accepts_measurements(self) -> bool:
        return self in (LotState.quarantine, LotState.testing)


STATE_LABELS: dict[LotState, str] = {
    LotState.quarantine: "received, in quarantine",
    LotState.testing: "in testing",
    LotState.awaiting_disposition: "conforms, awaiting QA disposition",
    LotState.awaiting_review: "failed, awaiting review",
    LotState.released: "released by QA",
    LotState.rejected: "rejected",
}


class LotStep(str, Enum):
    first_measurement = "first_measurement"
    all_passed = "all_passed"
    failure_found = "failure_found"
    measurement_invalidated = "measurement_invalidated"
    review_rejected = "review_rejected"
    qa_released = "qa_released"
    qa_rejected = "qa_rejected"


ALLOWED_STEPS: dict[tuple[LotState, LotStep], LotState] = {
    (LotState.quarantine, LotStep.first_measurement): LotState.testing,
    (LotState.testing, LotStep.all_passed): LotState.awaiting_disposition,
    (LotState.testing, LotStep.failure_found): LotState.awaiting_review,
    (LotState.awaiting_review, LotStep.measurement_invalidated): LotState.testing,
    (LotState.awaiting_review, LotStep.review_rejected): LotState.rejected,
    (LotState.awaiting_disposition, LotStep.qa_released): LotState.released,
    (LotState.awaiting_disposition, LotStep.qa_rejected): LotState.rejected,
}


class StepRefused(Conflict):
    """A step that the lot's current state does not allow; the message says what is allowed."""

    code = "step-not-allowed"
    title = "Step not allowed in the lot's current state"


def allowed_steps(state: LotState) -> tuple[LotStep, ...]:
    return tuple(step for (s, step) in ALLOWED_STEPS if s is state)


def next_state(state: LotState, step: LotStep) -> LotState:
    """The state after ``step``; raises StepRefused when the step is not allowed from ``state``."""
    try:
        return ALLOWED_STEPS[(LotState(state), LotStep(step))]
    except KeyError:
        allowed = ", ".join(s.value for s in allowed_steps(LotState(state))) or "none (the lot is closed)"
        raise StepRefused(
            f"a lot that is '{LotState(state).label}' cannot take the step '{LotStep(step).value}'; "
            f"allowed now: {allowed}"
        ) from None


class ContainerOutcome(str, Enum):
    """Where one sampled container stands, from its measurements."""

    untested = "untested"  # no usable result yet (nothing, or only unreadable / invalid uploads)
    passed = "passed"
    failed = "failed"


@dataclass(frozen=True, kw_only=True)
class ContainerResult:
    number: int
    outcome: ContainerOutcome


def outcome_step(results: list[ContainerResult] | tuple[ContainerResult, ...]) -> LotStep | None:
    """The step a lot in testing takes once every sampled container has a result, else None.

    Any failed container sends the lot to review; all passed sends it to QA disposition.
    """
    if not results or any(r.outcome is ContainerOutcome.untested for r in results):
        return None
    if any(r.outcome is ContainerOutcome.failed for r in results):
        return LotStep.failure_found
    return LotStep.all_passed


def outcome_from_counts(*, sampled: int, with_result: int, failed: int) -> LotStep | None:
    """:func:`outcome_step` from counts (for lots with many containers, counted by the database).

    ``sampled`` containers in the plan, ``with_result`` of them passed or failed, ``failed`` failed.
    """
    if sampled <= 0 or with_result < sampled:
        return None
    return LotStep.failure_found if failed > 0 else LotStep.all_passed


def container_outcome(verdicts: list[str]) -> ContainerOutcome:
    """A container's outcome from the verdicts of its *current* (not invalidated) evaluations.

    ``verdicts`` are evaluation verdicts in upload order ("pass", "fail", "invalid"). An
    "invalid" verdict (an unusable spectrum) is not a result. A failure stands until a
    reviewer invalidates it; a later pass cannot hide it (no testing into compliance).
    """
    if "fail" in verdicts:
        return ContainerOutcome.failed
    if "pass" in verdicts:
        return ContainerOutcome.passed
    return ContainerOutcome.untested
