"""Instrument qualification by polystyrene film checks: the pure rules (no database, no clock of its own).

An instrument is *qualified* at a moment when its most recent check (the one whose film was measured
last) passed and was measured less than the configured period before that moment. A failed check
disqualifies until a newer passing one; a passing check lapses by age. The time a check counts from
is when its film was measured, as the uploaded file says; a file without a time counts from when the
server recorded it. A file time far in the future or long before the upload is refused, not stored:
the time is what qualification counts from, so it must be believable.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta, timezone

from service.errors import FieldProblem, InvalidInput

# Clocks of instruments and server drift apart a little; beyond this a file time "in the future" is wrong.
MAX_CLOCK_SKEW = timedelta(minutes=5)
# A check uploaded long after the film was measured is stale evidence (common practice: a check is
# uploaded the day it is run); beyond this the file is refused and the check must be run again.
MAX_UPLOAD_DELAY = timedelta(days=30)


class CheckTimeRefused(InvalidInput):
    """The measurement time in a check file cannot be right: in the future, or too long before the upload."""


def _stamp(t: datetime) -> str:
    return f"{t:%Y-%m-%d %H:%M} UTC"


def as_utc(t: datetime) -> datetime:
    """A time as UTC; a time without an offset (the file did not say which clock) is taken as UTC."""
    return t.replace(tzinfo=timezone.utc) if t.tzinfo is None else t.astimezone(timezone.utc)


def check_measurement_time(*, instrument: str, measured_at: datetime | None,
                           recorded_at: datetime) -> datetime | None:
    """The file's measurement time as UTC, or ``CheckTimeRefused`` saying what is wrong and what to do."""
    if measured_at is None:
        return None
    measured, recorded = as_utc(measured_at), as_utc(recorded_at)
    if measured > recorded + MAX_CLOCK_SKEW:
        raise CheckTimeRefused(
            f"the check file says the film was measured at {_stamp(measured)}, later than the server's time "
            f"({_stamp(recorded)}); check the clock of {instrument} and the time in the file (##LONGDATE, or "
            "##DATE/##TIME; a time without a UTC offset is read as UTC), then upload the file again",
            fields=[FieldProblem("file", "the measurement time in the file is in the future")])
    if recorded - measured > MAX_UPLOAD_DELAY:
        raise CheckTimeRefused(
            f"the check file says the film was measured at {_stamp(measured)}, more than "
            f"{MAX_UPLOAD_DELAY.days} days before this upload ({_stamp(recorded)}); so old a check cannot "
            f"qualify the instrument: run the polystyrene check on {instrument} now and upload that file",
            fields=[FieldProblem("file", f"the measurement time is more than {MAX_UPLOAD_DELAY.days} days old")])
    return measured


@dataclass(frozen=True, kw_only=True)
class CheckFacts:
    """What the rule needs of one recorded check."""

    passed: bool
    recorded_at: datetime
    measured_at: datetime | None = None

    @property
    def counts_from(self) -> datetime:
        return as_utc(self.measured_at or self.recorded_at)


@dataclass(frozen=True, kw_only=True)
class Standing:
    qualified: bool
    qualified_until: datetime | None
    text: str


def standing(*, instrument: str, active: bool, latest: CheckFacts | None, at: datetime,
             period: timedelta) -> Standing:
    """Whether the instrument is qualified at ``at``, with a status in plain words that says what to do."""
    todo = f"run the polystyrene check on {instrument} and upload it, then measure again"
    if not active:
        return Standing(qualified=False, qualified_until=None,
                        text=f"instrument {instrument} is retired; use another instrument")
    if latest is None:
        return Standing(qualified=False, qualified_until=None,
                        text=f"instrument {instrument} has no passing polystyrene check; {todo}")
    when = latest.counts_from
    if not latest.passed:
        return Standing(qualified=False, qualified_until=None,
                        text=(f"instrument {instrument} is not qualified: its most recent polystyrene check "
                              f"(measured {_stamp(when)}) did not pass; {todo}"))
    until = when + period
    if as_utc(at) >= until:
        return Standing(qualified=False, qualified_until=until,
                        text=(f"instrument {instrument} is not qualified: its last polystyrene check passed but "
                              f"was measured {_stamp(when)}, and is older than {period / timedelta(days=1):g} "
                              f"day(s) (lapsed {_stamp(until)}); {todo}"))
    return Standing(qualified=True, qualified_until=until, text=f"qualified until {_stamp(until)}")
