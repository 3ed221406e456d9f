"""Tokens, CSRF tokens, throttling and session rules (pure)."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

from service.security import (
    SessionRules,
    ThrottlePolicy,
    account_verdict,
    address_verdict,
    csrf_matches,
    csrf_token,
    digest,
    end_reason,
    new_api_token,
    new_session_id,
)
from service.security.throttle import account_delay_seconds, should_lock
from service.security.tokens import looks_like_api_token

T0 = datetime(2026, 12, 2, 8, 0, tzinfo=timezone.utc)


def test_session_ids_are_fresh_and_stored_only_as_digests() -> None:
    ids = {new_session_id() for _ in range(100)}
    assert len(ids) == 100 and all(len(i) >= 43 for i in ids)
    sid = ids.pop()
    assert digest(sid) != sid and len(digest(sid)) == 64


def test_csrf_token_is_per_session_and_checked_in_constant_time() -> None:
    a, b = new_session_id(), new_session_id()
    assert csrf_token(a, "k" * 32) != csrf_token(b, "k" * 32)
    assert csrf_matches(a, "k" * 32, csrf_token(a, "k" * 32))
    assert not csrf_matches(a, "k" * 32, csrf_token(b, "k" * 32))
    assert not csrf_matches(a, "k" * 32, None) and not csrf_matches(a, "k" * 32, "")


def test_api_tokens_have_a_prefix_and_a_hash() -> None:
    t = new_api_token()
    assert looks_like_api_token(t.token) and t.token.split("_")[1] == t.prefix
    assert t.hash == digest(t.token) and t.token not in t.hash


def test_account_throttle_grows_then_locks_at_twenty() -> None:
    p = ThrottlePolicy()
    assert [account_delay_seconds(n, p) for n in range(0, 5)] == [0, 0, 0, 0, 0]
    assert [account_delay_seconds(n, p) for n in (5, 6, 7, 12)] == [1, 2, 4, 60]
    v = account_verdict(failures=6, last_failure_at=T0, locked_until=None, now=T0 + timedelta(seconds=1), policy=p)
    assert not v.allowed and v.retry_after == 1 and "wait" in v.reason
    assert account_verdict(failures=6, last_failure_at=T0, locked_until=None, now=T0 + timedelta(seconds=2)).allowed
    assert not should_lock(19, p) and should_lock(20, p)
    locked = account_verdict(failures=20, last_failure_at=T0, locked_until=T0 + timedelta(minutes=30),
                             now=T0 + timedelta(minutes=29))
    assert not locked.allowed and "locked" in locked.reason and locked.retry_after == 60


def test_address_throttle() -> None:
    assert address_verdict(recent_failures=49, oldest_counted_at=T0, now=T0).allowed
    v = address_verdict(recent_failures=50, oldest_counted_at=T0, now=T0 + timedelta(minutes=5))
    assert not v.allowed and v.retry_after == 600


def test_session_rules_idle_absolute_and_ended() -> None:
    rules = SessionRules.from_minutes(idle_minutes=15, absolute_hours=12)
    alive = dict(created_at=T0, last_seen_at=T0, ended_at=None, rules=rules)
    assert end_reason(now=T0 + timedelta(minutes=14, seconds=59), **alive) is None
    assert end_reason(now=T0 + timedelta(minutes=15), **alive) == "idle"
    busy = dict(alive, last_seen_at=T0 + timedelta(hours=12))
    assert end_reason(now=T0 + timedelta(hours=12, minutes=1), **busy) == "expired"
    assert end_reason(now=T0, **dict(alive, ended_at=T0)) == "ended"
