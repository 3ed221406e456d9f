"""The lot state machine: every allowed step and every forbidden one (common practice, 21 CFR 211.84)."""

from __future__ import annotations

import itertools

import pytest

from service.errors import Conflict
from service.release import (
    ALLOWED_STEPS, ContainerOutcome, ContainerResult, LotState, LotStep, StepRefused, allowed_steps,
    container_outcome, next_state, outcome_from_counts, outcome_step,
)

EXPECTED = {
    (LotState.quarantine, LotStep.first_measurement): LotState.testing,
    (LotState.testing, LotStep.all_passed): LotState.awaiting_disposition,
    (LotState.testing, LotStep.failure_found): LotState.awaiting_review,
    (LotState.awaiting_review, LotStep.measurement_invalidated): LotState.testing,
    (LotState.awaiting_review, LotStep.review_rejected): LotState.rejected,
    (LotState.awaiting_disposition, LotStep.qa_released): LotState.released,
    (LotState.awaiting_disposition, LotStep.qa_rejected): LotState.rejected,
}


@pytest.mark.parametrize(("state", "step"), list(itertools.product(LotState, LotStep)))
def test_every_state_and_step(state: LotState, step: LotStep) -> None:
    if (state, step) in EXPECTED:
        assert next_state(state, step) is EXPECTED[(state, step)]
    else:
        with pytest.raises(StepRefused) as info:
            next_state(state, step)
        assert isinstance(info.value, Conflict)
        assert state.label in info.value.message and step.value in info.value.message


def test_table_is_exactly_the_expected_one() -> None:
    assert ALLOWED_STEPS == EXPECTED


def test_a_computed_pass_never_releases_a_lot() -> None:
    # No step leads to 'released' except the QA release from awaiting disposition.
    into_released = [k for k, v in ALLOWED_STEPS.items() if v is LotState.released]
    assert into_released == [(LotState.awaiting_disposition, LotStep.qa_released)]
    assert next_state(LotState.testing, LotStep.all_passed) is LotState.awaiting_disposition


def test_final_states_allow_nothing() -> None:
    for state in (LotState.released, LotState.rejected):
        assert state.is_final and allowed_steps(state) == ()
        with pytest.raises(StepRefused, match="closed"):
            next_state(state, LotStep.qa_released)


def test_states_have_plain_labels() -> None:
    assert LotState.awaiting_review.label == "failed, awaiting review"
    assert LotState.awaiting_disposition.label == "conforms, awaiting QA disposition"
    assert LotState.quarantine.label == "received, in quarantine"


def _r(*outcomes: ContainerOutcome) -> list[ContainerResult]:
    return [ContainerResult(number=i + 1, outcome=o) for i, o in enumerate(outcomes)]


def test_outcome_waits_for_every_sampled_container() -> None:
    P, F, U = ContainerOutcome.passed, ContainerOutcome.failed, ContainerOutcome.untested
    assert outcome_step(_r(P, P, U)) is None
    assert outcome_step(_r(F, U)) is None
    assert outcome_step(_r(P, P, P)) is LotStep.all_passed
    assert outcome_step(_r(P, F, P)) is LotStep.failure_found
    assert outcome_step([]) is None


def test_container_outcome_from_verdicts() -> None:
    assert container_outcome([]) is ContainerOutcome.untested
    assert container_outcome(["invalid"]) is ContainerOutcome.untested  # an unusable spectrum is no result
    assert container_outcome(["invalid", "pass"]) is ContainerOutcome.passed
    assert container_outcome(["fail", "pass"]) is ContainerOutcome.failed  # no testing into compliance


def test_outcome_from_counts_agrees_with_outcome_step() -> None:
    P, F, U = ContainerOutcome.passed, ContainerOutcome.failed, ContainerOutcome.untested
    for combo in itertools.chain.from_iterable(itertools.product((P, F, U), repeat=k) for k in range(0, 5)):
        results = _r(*combo)
        counts = dict(sampled=len(combo), with_result=sum(o is not U for o in combo),
                      failed=sum(o is F for o in combo))
        assert outcome_from_counts(**counts) is outcome_step(results), combo
