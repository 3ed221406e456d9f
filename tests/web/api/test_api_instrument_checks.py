"""/api/v1 instrument checks carry both times: when the film was measured (from the file) and when the server
recorded the check; a file time in the future is a 422 problem naming the file, and nothing is stored.
The polystyrene film is SYNTHETIC (records_spectra)."""

from __future__ import annotations

from datetime import datetime, timedelta, timezone

from api_factories import make_lab
import records_spectra as sp


def _t(text: str) -> datetime:
    return datetime.fromisoformat(text.replace("Z", "+00:00"))


def _film(when: datetime) -> bytes:
    return sp.synthetic_polystyrene_jcamp(time_lines=(f"##LONGDATE={when:%Y/%m/%d %H:%M:%S} +0000",))


def test_a_check_measured_three_days_ago_is_shown_with_both_times_and_lapsed(db_url: str) -> None:
    lab = make_lab(db_url, spectra=False)
    c, auth = lab.client, lab.auth()
    measured = datetime.now(timezone.utc).replace(microsecond=0) - timedelta(days=3)
    r = c.post("/api/v1/instruments/FTIR-01/checks", headers=auth,
               files={"file": ("ps.jdx", _film(measured), "chemical/x-jcamp-dx")})
    assert r.status_code == 201, r.text
    body = r.json()
    assert body["passed"] is True and _t(body["measured_at"]) == measured
    assert _t(body["counts_from"]) == measured
    assert _t(body["checked_at"]) - measured > timedelta(days=2, hours=23)
    inst = c.get("/api/v1/instruments/FTIR-01", headers=auth).json()
    assert inst["qualified"] is False and inst["last_check_passed"] is True
    assert _t(inst["last_check_measured_at"]) == measured
    assert _t(inst["last_check_recorded_at"]) == _t(body["checked_at"])
    assert "run the polystyrene check on FTIR-01 and upload it, then measure again" in inst["status_text"]
    listed = c.get("/api/v1/instruments/FTIR-01/checks", headers=auth).json()
    assert [(_t(x["measured_at"]), _t(x["checked_at"])) for x in listed] == [(measured, _t(body["checked_at"]))]


def test_a_film_time_in_the_future_is_a_422_and_nothing_is_stored(db_url: str) -> None:
    lab = make_lab(db_url, spectra=False)
    c, auth = lab.client, lab.auth()
    future = datetime.now(timezone.utc) + timedelta(days=1)
    r = c.post("/api/v1/instruments/FTIR-01/checks", headers=auth,
               files={"file": ("ps.jdx", _film(future), "chemical/x-jcamp-dx")})
    assert r.status_code == 422 and r.headers["content-type"].startswith("application/problem+json")
    problem = r.json()
    assert "later than the server's time" in problem["detail"], problem
    assert c.get("/api/v1/instruments/FTIR-01/checks", headers=auth).json() == []
