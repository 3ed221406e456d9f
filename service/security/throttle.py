"""Brute-force rules for sign-in and signature attempts (OWASP ASVS 4.0 V2.2.1; 21 CFR 11.300(d)).

Pure decisions over counts and times that the store supplies:

* **per account**: the first `free_failures` consecutive failures cost nothing; after that each
  further attempt must wait ``2**(failures - free_failures)`` seconds (capped) after the last
  failure; attempts during the wait are refused *without checking the password* and do not
  count. At `lock_after` consecutive failures the account is locked for `lock_minutes` (an
  administrator may unlock it earlier); the lock is an audit event.
* **per address**: more than `address_failures` failures from one network address within
  `address_window_minutes` refuse further attempts from that address until the window moves on
  (password spraying across many accounts). Nothing is locked for an address.

A success resets the account's count. Signature attempts count like sign-in attempts.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta


@dataclass(frozen=True, kw_only=True)
class ThrottlePolicy:
    free_failures: int = 5
    max_delay_seconds: int = 60
    lock_after: int = 20
    lock_minutes: int = 30
    address_failures: int = 50
    address_window_minutes: int = 15


@dataclass(frozen=True, kw_only=True)
class Verdict:
    """May an attempt go ahead? If not, why and for how long (seconds, rounded up)."""

    allowed: bool
    reason: str = ""
    retry_after: int = 0


def account_delay_seconds(failures: int, policy: ThrottlePolicy) -> int:
    """Seconds an account must wait after its last failure before the next attempt is heard."""
    if failures < policy.free_failures:
        return 0
    return min(2 ** (failures - policy.free_failures), policy.max_delay_seconds)


def _ceil_seconds(delta: timedelta) -> int:
    s = delta.total_seconds()
    return max(1, int(s) + (0 if s == int(s) else 1))


def account_verdict(*, failures: int, last_failure_at: datetime | None, locked_until: datetime | None,
                    now: datetime, policy: ThrottlePolicy = ThrottlePolicy()) -> Verdict:
    """Whether an account may attempt a password now."""
    if locked_until is not None and now < locked_until:
        return Verdict(
            allowed=False,
            reason=f"the account is locked after {policy.lock_after} wrong passwords; "
            "ask an administrator to unlock it, or try again later",
            retry_after=_ceil_seconds(locked_until - now),
        )
    delay = account_delay_seconds(failures, policy)
    if delay and last_failure_at is not None:
        ready = last_failure_at + timedelta(seconds=delay)
        if now < ready:
            wait = _ceil_seconds(ready - now)
            return Verdict(
                allowed=False,
                reason=f"too many wrong passwords for this account; wait {wait} seconds and try again",
                retry_after=wait,
            )
    return Verdict(allowed=True)


def address_verdict(*, recent_failures: int, oldest_counted_at: datetime | None, now: datetime,
                    policy: ThrottlePolicy = ThrottlePolicy()) -> Verdict:
    """Whether an address may attempt now, given its failures within the window."""
    if recent_failures < policy.address_failures:
        return Verdict(allowed=True)
    window = timedelta(minutes=policy.address_window_minutes)
    free_at = (oldest_counted_at or now) + window
    return Verdict(
        allowed=False,
        reason="too many wrong passwords from this network address; wait a few minutes and try again",
        retry_after=_ceil_seconds(free_at - now) if free_at > now else 60,
    )


def should_lock(failures_after_this_one: int, policy: ThrottlePolicy = ThrottlePolicy()) -> bool:
    """True when this failure reaches the lock threshold."""
    return failures_after_this_one >= policy.lock_after


def lock_until(now: datetime, policy: ThrottlePolicy = ThrottlePolicy()) -> datetime:
    return now + timedelta(minutes=policy.lock_minutes)
