"""The qualification rule at its edges (pure: no database, no clock). A daily check and a failed check taking an
instrument out of use are common practice; the 5-minute clock skew and 30-day upload limit are our own choices."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import pytest

from service.errors import InvalidInput
from service.release.qualification import (
    MAX_CLOCK_SKEW, MAX_UPLOAD_DELAY, CheckFacts, CheckTimeRefused, check_measurement_time, standing,
)

T0 = datetime(2026, 12, 2, 8, 0, tzinfo=timezone.utc)
DAY = timedelta(days=1)


def _st(latest: CheckFacts | None, at: datetime, *, active: bool = True):  # type: ignore[no-untyped-def]
    return standing(instrument="IR-7", active=active, latest=latest, at=at, period=DAY)


def test_a_passing_check_qualifies_until_exactly_one_period_after_the_measurement() -> None:
    check = CheckFacts(passed=True, recorded_at=T0 + timedelta(hours=2), measured_at=T0)
    assert _st(check, T0 + DAY - timedelta(seconds=1)).qualified
    lapsed = _st(check, T0 + DAY)
    assert not lapsed.qualified and lapsed.qualified_until == T0 + DAY
    assert "run the polystyrene check on IR-7 and upload it, then measure again" in lapsed.text


def test_without_a_file_time_the_recording_time_counts() -> None:
    check = CheckFacts(passed=True, recorded_at=T0)
    assert check.counts_from == T0 and _st(check, T0 + DAY - timedelta(seconds=1)).qualified


def test_a_failed_most_recent_check_never_qualifies() -> None:
    st = _st(CheckFacts(passed=False, recorded_at=T0), T0 + timedelta(minutes=1))
    assert not st.qualified and st.qualified_until is None and "did not pass" in st.text


def test_no_check_and_a_retired_instrument() -> None:
    assert "no passing polystyrene check" in _st(None, T0).text
    assert "retired" in _st(CheckFacts(passed=True, recorded_at=T0), T0, active=False).text


def test_measurement_time_limits_at_their_edges() -> None:
    assert check_measurement_time(instrument="IR-7", measured_at=None, recorded_at=T0) is None
    assert check_measurement_time(instrument="IR-7", measured_at=T0 + MAX_CLOCK_SKEW, recorded_at=T0) == T0 + MAX_CLOCK_SKEW
    assert check_measurement_time(instrument="IR-7", measured_at=T0 - MAX_UPLOAD_DELAY, recorded_at=T0) == T0 - MAX_UPLOAD_DELAY
    with pytest.raises(CheckTimeRefused, match="later than the server's time"):
        check_measurement_time(instrument="IR-7", measured_at=T0 + MAX_CLOCK_SKEW + timedelta(seconds=1), recorded_at=T0)
    with pytest.raises(CheckTimeRefused, match="more than 30 days"):
        check_measurement_time(instrument="IR-7", measured_at=T0 - MAX_UPLOAD_DELAY - timedelta(seconds=1), recorded_at=T0)
    assert issubclass(CheckTimeRefused, InvalidInput)  # a 422, nothing stored


def test_a_time_without_offset_is_read_as_utc_and_offsets_are_converted() -> None:
    naive = datetime(2026, 12, 2, 7, 0)
    assert check_measurement_time(instrument="IR-7", measured_at=naive, recorded_at=T0) == T0 - timedelta(hours=1)
    cet = datetime(2026, 12, 2, 8, 30, tzinfo=timezone(timedelta(hours=1)))
    assert check_measurement_time(instrument="IR-7", measured_at=cet, recorded_at=T0) == T0 - timedelta(minutes=30)
