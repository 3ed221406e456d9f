"""Instrument qualification by polystyrene checks: the most recent check governs, counted from when the film
was measured (the file's JCAMP-DX ``##LONGDATE`` or ``##DATE``/``##TIME``), beside the server's recording time.

A daily check before use, and a failed check taking the instrument out of use until a passing one, are
common practice for IR identity testing (Ph. Eur. 2.2.24 gives the film's band positions, not the period).
The film is SYNTHETIC (``records_spectra.synthetic_polystyrene_jcamp``).
"""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

import pytest

from service import services as uc
import records_spectra as sp
from records_factories import receive

TODO = "run the polystyrene check on FTIR-1 and upload it, then measure again"


def _longdate(t: datetime, offset: str = "") -> str:
    return f"##LONGDATE={t:%Y/%m/%d %H:%M:%S}{offset}"


def _check(lab, *, measured: datetime | None = None, shift: float = 0.0, lines: tuple[str, ...] = (),  # type: ignore[no-untyped-def]
           code: str = "FTIR-1"):
    time_lines = lines or ((_longdate(measured),) if measured else ())
    data = sp.synthetic_polystyrene_jcamp(time_lines=time_lines, shift_cm1=shift)
    return uc.record_instrument_check(lab.engine, lab.tech, instrument_code=code, data=data, file_name="ps.jdx")


def _upload(lab, days: float = 1.0, code: str = "FTIR-1"):  # type: ignore[no-untyped-def]
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=1)
    return uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code=code,
                                 data=sp.real_csv("toluene"), file_name="t.csv", check_days=days)


def _now() -> datetime:
    return datetime.now(timezone.utc).replace(microsecond=0)


def test_a_failed_check_after_a_passing_one_disqualifies_until_a_new_pass(lab) -> None:  # type: ignore[no-untyped-def]
    assert uc.get_instrument(lab.engine, "FTIR-1").qualified  # the fixture's passing check, just recorded
    failed = _check(lab, shift=2.5)  # scale drifted by 2.5 cm-1: outside the Ph. Eur. 2.2.24 tolerances
    assert not failed.passed
    inst = uc.get_instrument(lab.engine, "FTIR-1")
    assert not inst.qualified and inst.last_check_passed is False and inst.qualified_until is None
    assert "most recent polystyrene check" in inst.status_text and "did not pass" in inst.status_text
    assert inst.last_passing_check_at is not None  # the earlier pass is still shown, it just does not count
    with pytest.raises(uc.MeasurementRefused, match=TODO) as info:
        _upload(lab)
    assert info.value.measurement.status == "refused"  # kept, with the reason
    assert _check(lab).passed
    assert uc.get_instrument(lab.engine, "FTIR-1").qualified
    assert _upload(lab).verdict == "pass"


def test_an_unreadable_check_file_counts_as_a_check_that_did_not_pass(lab) -> None:  # type: ignore[no-untyped-def]
    kept = uc.record_instrument_check(lab.engine, lab.tech, instrument_code="FTIR-1", data=b"not a spectrum",
                                      file_name="photo.png")
    assert not kept.passed and kept.measured_at is None and kept.result["error"]
    assert not uc.get_instrument(lab.engine, "FTIR-1").qualified


def test_a_passing_check_measured_days_ago_is_recorded_but_has_lapsed(lab) -> None:  # type: ignore[no-untyped-def]
    uc.register_instrument(lab.engine, lab.qa, code="FTIR-3", kind="FT-IR")
    measured = _now() - timedelta(days=3)
    before = _now()
    check = _check(lab, measured=measured, code="FTIR-3")
    assert check.passed and check.measured_at == measured and check.counts_from == measured
    assert check.checked_at >= before  # the recording time stays the server's own (audit) time
    inst = uc.get_instrument(lab.engine, "FTIR-3")
    assert not inst.qualified and inst.last_check_passed is True
    assert inst.last_check_measured_at == measured and inst.last_check_recorded_at == check.checked_at
    assert inst.qualified_until == measured + timedelta(days=1)
    assert "passed but was measured" in inst.status_text and "older than 1 day(s)" in inst.status_text
    with pytest.raises(uc.MeasurementRefused, match=TODO.replace("FTIR-1", "FTIR-3")):
        _upload(lab, code="FTIR-3")
    # a longer period (settings.instrument_check_days) still covers it, counted from the measurement
    five = uc.get_instrument(lab.engine, "FTIR-3", check_days=5)
    assert five.qualified and five.qualified_until == measured + timedelta(days=5)
    events = uc.audit_events(lab.engine, record_type="instrument_check", record_id=str(check.id))
    assert events and events[0]["new_values"]["measured_at"] == measured.isoformat()


def test_the_check_measured_last_governs_not_the_one_uploaded_last(lab) -> None:  # type: ignore[no-untyped-def]
    uc.register_instrument(lab.engine, lab.qa, code="FTIR-3", kind="FT-IR")
    now = _now()
    assert _check(lab, measured=now - timedelta(minutes=10), code="FTIR-3").passed
    late = _check(lab, measured=now - timedelta(hours=3), shift=2.5, code="FTIR-3")  # older failed film, uploaded late
    assert not late.passed
    assert uc.get_instrument(lab.engine, "FTIR-3").qualified
    assert not _check(lab, measured=now - timedelta(minutes=5), shift=2.5, code="FTIR-3").passed  # newer failure
    assert not uc.get_instrument(lab.engine, "FTIR-3").qualified
    assert _check(lab, measured=now - timedelta(minutes=8), code="FTIR-3").passed  # an older pass does not undo it
    assert not uc.get_instrument(lab.engine, "FTIR-3").qualified
    listed = uc.instrument_checks(lab.engine, "FTIR-3")
    assert [c.id for c in listed] == sorted((c.id for c in listed), reverse=True)  # listed in recording order


def test_a_file_without_a_time_counts_from_its_recording(lab) -> None:  # type: ignore[no-untyped-def]
    check = uc.instrument_checks(lab.engine, "FTIR-1")[0]  # the fixture's CSV film: no time in the file
    assert check.measured_at is None and check.counts_from == check.checked_at


def test_a_utc_offset_in_longdate_is_honoured(lab) -> None:  # type: ignore[no-untyped-def]
    # JCAMP-DX 5.01 ##LONGDATE= YYYY/MM/DD HH:MM:SS [+-]UUUU (offset from UTC)
    utc = _now() - timedelta(hours=2)
    local = utc.astimezone(timezone(timedelta(hours=5, minutes=30)))
    check = _check(lab, lines=(f"##LONGDATE={local:%Y/%m/%d %H:%M:%S} +0530",))
    assert check.measured_at == utc


def test_date_and_time_records_are_read_when_there_is_no_longdate(lab) -> None:  # type: ignore[no-untyped-def]
    # JCAMP-DX 4.24: ##DATE=YY/MM/DD, ##TIME=HH:MM:SS (no offset: read as UTC)
    t = _now() - timedelta(hours=1)
    check = _check(lab, lines=(f"##DATE={t:%y/%m/%d}", f"##TIME={t:%H:%M:%S}"))
    assert check.measured_at == t


def test_a_measurement_time_in_the_future_is_refused_and_nothing_is_stored(lab) -> None:  # type: ignore[no-untyped-def]
    before = len(uc.instrument_checks(lab.engine, "FTIR-1"))
    events = len(uc.audit_events(lab.engine, limit=1000))
    with pytest.raises(uc.CheckTimeRefused, match="later than the server's time.*clock of FTIR-1") as info:
        _check(lab, measured=_now() + timedelta(hours=2))
    assert info.value.fields and info.value.fields[0].path == "file"
    assert len(uc.instrument_checks(lab.engine, "FTIR-1")) == before
    assert len(uc.audit_events(lab.engine, limit=1000)) == events
    # a small clock skew is tolerated (up to 5 minutes ahead)
    assert _check(lab, measured=_now() + timedelta(minutes=2)).passed


def test_a_measurement_time_more_than_30_days_before_the_upload_is_refused(lab) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(uc.CheckTimeRefused, match="more than 30 days before.*run the polystyrene check on FTIR-1"):
        _check(lab, measured=_now() - timedelta(days=31))
    ok = _check(lab, measured=_now() - timedelta(days=29))
    assert ok.passed and ok.measured_at is not None
