"""Who is acting: the person behind every use case call and every audit event."""

from __future__ import annotations

from dataclasses import dataclass

from service.errors import Forbidden


@dataclass(frozen=True, kw_only=True)
class Actor:
    """A signed-in person (or the system itself). ``roles`` are role names; security defines them."""

    user_id: int
    username: str
    printed_name: str
    roles: frozenset[str] = frozenset()

    def has_role(self, role: str) -> bool:
        return role in self.roles


class SeparationOfDuties(Forbidden):
    """The same person may not both measure a lot and review it (second-person review)."""

    code = "separation-of-duties"
    title = "Second person required"


def check_reviewer_did_not_measure(*, reviewer: Actor, measured_by: set[int] | frozenset[int]) -> None:
    """Refuse a review by anyone who recorded a measurement on the lot (21 CFR 211.194(a)(8))."""
    if reviewer.user_id in measured_by:
        raise SeparationOfDuties(
            f"{reviewer.printed_name} recorded measurements on this lot and cannot also review it; "
            "ask another reviewer"
        )
