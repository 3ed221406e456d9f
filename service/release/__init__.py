"""Pure domain rules of the release process: sampling plans, lot states, signatures, digests.

Imports nothing from the web or the database.
"""

from service.release.actor import Actor, SeparationOfDuties, check_reviewer_did_not_measure
from service.release.digests import GENESIS_HASH, canonical_json, event_hash, record_digest, sha256_hex
from service.release.lot_states import (
    ALLOWED_STEPS,
    STATE_LABELS,
    ContainerOutcome,
    ContainerResult,
    LotState,
    LotStep,
    StepRefused,
    allowed_steps,
    container_outcome,
    next_state,
    outcome_from_counts,
    outcome_step,
)
from service.release.sampling import PlanKind, SamplingPlan, compute_plan, plan_sizes
from service.release.signing import MEANING_TEXT, RECORD_MEANINGS, Meaning, meaning_allowed

__all__ = [
    "ALLOWED_STEPS", "Actor", "ContainerOutcome", "ContainerResult", "GENESIS_HASH", "LotState", "LotStep",
    "MEANING_TEXT", "Meaning", "PlanKind", "RECORD_MEANINGS", "STATE_LABELS", "SamplingPlan",
    "SeparationOfDuties", "StepRefused", "allowed_steps", "canonical_json", "check_reviewer_did_not_measure",
    "compute_plan", "container_outcome", "event_hash", "meaning_allowed", "next_state", "outcome_from_counts", "outcome_step",
    "plan_sizes", "record_digest", "sha256_hex",
]
