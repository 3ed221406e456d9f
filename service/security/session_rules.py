"""When a server-side session is alive (OWASP ASVS 4.0 V3.3; Annex 11 §12.1).

A session ends at the first of: sign-out, the idle timeout (no request for `idle` minutes),
the absolute timeout (`absolute` hours after sign-in), the person being disabled or locked,
or a password change/reset.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta


@dataclass(frozen=True, kw_only=True)
class SessionRules:
    idle: timedelta
    absolute: timedelta

    @classmethod
    def from_minutes(cls, *, idle_minutes: int, absolute_hours: int) -> "SessionRules":
        return cls(idle=timedelta(minutes=idle_minutes), absolute=timedelta(hours=absolute_hours))


def end_reason(*, created_at: datetime, last_seen_at: datetime, ended_at: datetime | None,
               now: datetime, rules: SessionRules) -> str | None:
    """None while the session is alive, otherwise why it is not: ended, idle, expired."""
    if ended_at is not None:
        return "ended"
    if now - last_seen_at >= rules.idle:
        return "idle"
    if now - created_at >= rules.absolute:
        return "expired"
    return None
