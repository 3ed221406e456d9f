"""Signature meanings and which record each may be given to (21 CFR 11.50: the meaning is shown)."""

from __future__ import annotations

from enum import Enum


class Meaning(str, Enum):
    approved = "approved"  # a specification version or reference spectrum is approved for use
    reviewed = "reviewed"  # second-person review of the results
    invalidated = "invalidated"  # a measurement set aside with an assignable cause
    rejected = "rejected"  # a lot rejected (by review of a failure or by QA disposition)
    released = "released"  # a lot released by QA


MEANING_TEXT: dict[Meaning, str] = {
    Meaning.approved: "I approve this record for use in testing.",
    Meaning.reviewed: "I have reviewed these results and the data behind them.",
    Meaning.invalidated: "I set this measurement aside for the assignable cause stated; a retest is allowed.",
    Meaning.rejected: "I reject this lot; it must not be used.",
    Meaning.released: "I release this lot for use on the quality unit's authority.",
}

RECORD_MEANINGS: dict[str, frozenset[Meaning]] = {
    "specification_version": frozenset({Meaning.approved}),
    "reference_spectrum": frozenset({Meaning.approved}),
    "measurement": frozenset({Meaning.invalidated, Meaning.reviewed}),
    "lot": frozenset({Meaning.rejected, Meaning.released, Meaning.reviewed}),
}


def meaning_allowed(record_type: str, meaning: Meaning | str) -> bool:
    return Meaning(meaning) in RECORD_MEANINGS.get(record_type, frozenset())
