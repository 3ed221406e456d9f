"""Every form's bad input: the message appears in place, next to its field, and nothing changes.

"Nothing changes" is checked against the audit trail (every GMP create or change writes an event
in the same transaction), so a half-written record would show as a new event.
"""

from __future__ import annotations

import re

from pages_site import Site, csrf
from pages_lab import PASSWORD, PEOPLE, WRONG_FILE, failing_upload
from records_factories import make_material
from service import services as uc


def _events(site: Site) -> int:
    return len(uc.audit_events(site.engine, limit=1000))


def _field_error(html: str, field: str) -> str:
    m = re.search(rf'<p class="field-error" id="{field}-error">(.*?)</p>', html, re.S)
    assert m, f"no message next to field {field!r}"
    return re.sub(r"<[^>]+>", "", m.group(1)).strip()


def _catalogue(site: Site) -> None:
    qa = uc.get_actor(site.engine, PEOPLE["qa"].username)
    make_material(site.engine, qa, code="TOL-01", name="Toluene", supplier="Northwind Solvents")
    uc.create_supplier(site.engine, qa, name="Unvetted Chemicals")
    uc.register_instrument(site.engine, qa, code="FTIR-1", kind="FT-IR, diamond ATR", location="QC lab 2")


# --- receive a lot ----------------------------------------------------------------------------

def test_receive_with_every_field_missing_names_each_field_and_saves_nothing(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/lots/receive")
    before = _events(people_site)
    r = c.post("/lots/receive", data={"csrf_token": token})
    assert r.status_code == 422
    assert "Nothing was saved" in r.text
    assert "choose the material" in _field_error(r.text, "material")
    assert "choose the supplier" in _field_error(r.text, "supplier")
    assert "lot number" in _field_error(r.text, "supplier_lot")
    assert "number of containers" in _field_error(r.text, "containers")
    assert "date received" in _field_error(r.text, "received_on")
    assert 'aria-invalid="true"' in r.text
    assert _events(people_site) == before and uc.list_lots(people_site.engine)[1] == 0


def test_receive_with_wrong_values_keeps_what_was_typed(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/lots/receive")
    before = _events(people_site)
    r = c.post("/lots/receive", data={"csrf_token": token, "material": "TOL-01", "supplier": "Northwind Solvents",
                                      "supplier_lot": "NS-1", "containers": "two", "received_on": "01/12/2026",
                                      "retest_on": "2026-11-01"})
    assert r.status_code == 422
    assert "whole number" in _field_error(r.text, "containers")
    assert "YYYY-MM-DD" in _field_error(r.text, "received_on")
    assert 'value="NS-1"' in r.text  # what was typed stays
    assert _events(people_site) == before


def test_receive_from_a_supplier_not_approved_for_the_material_is_refused_in_place(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/lots/receive")
    before = _events(people_site)
    r = c.post("/lots/receive", data={"csrf_token": token, "material": "TOL-01", "supplier": "Unvetted Chemicals",
                                      "supplier_lot": "U-1", "containers": "3", "received_on": "2026-12-01"})
    assert r.status_code == 422
    assert "not approved for material TOL-01" in r.text
    assert _events(people_site) == before and uc.list_lots(people_site.engine)[1] == 0


def test_receive_then_the_lot_page_shows_the_plan_and_why(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/lots/receive")
    r = c.post("/lots/receive", data={"csrf_token": token, "material": "TOL-01", "supplier": "Northwind Solvents",
                                      "supplier_lot": "NS-1", "containers": "9", "received_on": "2026-12-01"})
    assert r.status_code == 303
    page = c.get(r.headers["location"]).text
    assert "received, in quarantine" in page and "Why:" in page
    assert "<dd><strong>9</strong></dd>" in page  # every container of 9 is tested (no reduced plan)


def test_a_form_posted_without_its_token_changes_nothing(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    before = _events(people_site)
    r = c.post("/lots/receive", data={"material": "TOL-01", "supplier": "Northwind Solvents", "supplier_lot": "X",
                                      "containers": "1", "received_on": "2026-12-01"})
    assert r.status_code == 403
    assert _events(people_site) == before


# --- upload -----------------------------------------------------------------------------------

def _lot(site: Site) -> str:
    tech = uc.get_actor(site.engine, PEOPLE["tech"].username)
    from datetime import date

    return uc.receive_lot(site.engine, tech, material_code="TOL-01", supplier_name="Northwind Solvents",
                          supplier_lot="NS-9", containers=2, received_on=date(2026, 12, 1)).code


def test_upload_without_container_instrument_or_file_names_each_and_keeps_nothing(people_site: Site) -> None:
    _catalogue(people_site)
    code = _lot(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, f"/lots/{code}/upload")
    before = _events(people_site)
    r = c.post(f"/lots/{code}/upload", data={"csrf_token": token})
    assert r.status_code == 422
    assert "container" in _field_error(r.text, "container")
    assert "instrument" in _field_error(r.text, "instrument")
    assert "spectrum file" in _field_error(r.text, "file")
    assert _events(people_site) == before and not uc.get_lot(people_site.engine, code).measurements


def test_upload_of_an_empty_file_is_refused_in_place(people_site: Site) -> None:
    _catalogue(people_site)
    code = _lot(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, f"/lots/{code}/upload")
    before = _events(people_site)
    r = c.post(f"/lots/{code}/upload", data={"csrf_token": token, "container": "1", "instrument": "FTIR-1"},
               files={"file": ("empty.csv", b"", "text/csv")})
    assert r.status_code == 422
    assert "is empty" in _field_error(r.text, "file")
    assert _events(people_site) == before


def test_upload_of_a_wrong_file_says_why_next_to_the_form_and_keeps_it_as_rejected(lab_site: Site) -> None:
    _lot_code = _lot(lab_site)
    c = lab_site.client("tech")
    _, token = csrf(c, f"/lots/{_lot_code}/upload")
    r = c.post(f"/lots/{_lot_code}/upload", data={"csrf_token": token, "container": "1", "instrument": "FTIR-1"},
               files={"file": ("delivery-note.pdf", WRONG_FILE, "application/pdf")})
    assert r.status_code == 422
    message = _field_error(r.text, "file")
    assert message  # the reader's own words, next to the file field
    lot = uc.get_lot(lab_site.engine, _lot_code)
    assert [m.status for m in lot.measurements] == ["unreadable"]  # kept, as a rejected measurement
    assert f"kept on record as measurement {lot.measurements[0].id}" in r.text
    assert lot.state == "quarantine"  # the lot did not move


def test_evaluation_page_shows_plot_criteria_and_spec(lab_site: Site) -> None:
    code = _lot(lab_site)
    c = lab_site.client("tech")
    _, token = csrf(c, f"/lots/{code}/upload")
    r = c.post(f"/lots/{code}/upload", data={"csrf_token": token, "container": "1", "instrument": "FTIR-1"},
               files={"file": ("c1.csv", failing_upload(), "text/csv")})
    assert r.status_code == 303, r.text[:2000]
    page = c.get(r.headers["location"]).text
    assert "Does not conform" in page
    assert '<svg class="plot"' in page and "fingerprint region" in page
    assert "TOL-01 version 1" in page
    assert "misses" in page and "Closest library matches" in page


# --- signing ------------------------------------------------------------------------------------

def _failed_lot(site: Site) -> str:
    tech = uc.get_actor(site.engine, PEOPLE["tech"].username)
    code = _lot(site)
    from pages_lab import passing_upload

    uc.record_measurement(site.engine, tech, lot_code=code, container=1, instrument_code="FTIR-1",
                          data=passing_upload(), file_name="c1.csv")
    uc.record_measurement(site.engine, tech, lot_code=code, container=2, instrument_code="FTIR-1",
                          data=failing_upload(), file_name="c2.csv")
    assert uc.get_lot(site.engine, code).state == "awaiting_review"
    return code


def test_signing_without_a_reason_or_with_a_wrong_password_signs_nothing(lab_site: Site) -> None:
    code = _failed_lot(lab_site)
    c = lab_site.client("sup")
    html, token = csrf(c, f"/lots/{code}/review/reject")
    assert html.index('id="meaning"') < html.index('id="password"')  # meaning before password
    before = _events(lab_site)
    r = c.post(f"/lots/{code}/review/reject", data={"csrf_token": token, "reason": "", "password": PASSWORD,
                                                     "username": PEOPLE["sup"].username})
    assert r.status_code == 422 and "reason" in _field_error(r.text, "reason")
    assert _events(lab_site) == before
    r = c.post(f"/lots/{code}/review/reject", data={"csrf_token": token, "reason": "mix-up",
                                                     "username": PEOPLE["sup"].username, "password": "not-my-password"})
    assert r.status_code == 403
    assert "nothing was signed" in _field_error(r.text, "password")
    lot = uc.get_lot(lab_site.engine, code)
    assert lot.state == "awaiting_review" and not lot.signatures


def test_a_technician_cannot_open_the_signing_step(lab_site: Site) -> None:
    code = _failed_lot(lab_site)
    c = lab_site.client("tech")
    assert c.get(f"/lots/{code}/review/reject").status_code == 403


# --- specifications, references, instruments, audit ----------------------------------------

def test_spec_editor_names_bad_rows_and_saves_no_version(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("qa")
    _, token = csrf(c, "/materials/TOL-01/specs/new")
    before = _events(people_site)
    r = c.post("/materials/TOL-01/specs/new", data={
        "csrf_token": token, "band_rows": "3", "forbidden_rows": "2", "name": "", "preparation": "",
        "range_high": "4000", "range_low": "650", "rb0_label": "ring", "rb0_from": "1510", "rb0_to": "abc"})
    assert r.status_code == 422
    assert "name" in _field_error(r.text, "name")
    assert "preparation" in _field_error(r.text, "preparation")
    assert "must be a number" in _field_error(r.text, "rb0_to")
    assert _events(people_site) == before and uc.spec_versions(people_site.engine, "TOL-01") == []


def test_spec_editor_shows_the_parsers_problem_on_the_row(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("qa")
    _, token = csrf(c, "/materials/TOL-01/specs/new")
    before = _events(people_site)
    r = c.post("/materials/TOL-01/specs/new", data={
        "csrf_token": token, "band_rows": "3", "forbidden_rows": "2", "name": "Toluene ID", "preparation": "atr-diamond",
        "range_high": "3200", "range_low": "800", "rb1_label": "ring", "rb1_from": "9000", "rb1_to": "1480"})
    assert r.status_code == 422
    assert _field_error(r.text, "rb1_from")  # the parser's path required_bands[0].from lands on row 1
    assert _events(people_site) == before


def test_spec_editor_saves_a_draft_and_approval_is_signed(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("qa")
    _, token = csrf(c, "/materials/TOL-01/specs/new")
    r = c.post("/materials/TOL-01/specs/new", data={
        "csrf_token": token, "band_rows": "3", "forbidden_rows": "2", "name": "Toluene ID", "preparation": "atr-diamond",
        "range_high": "3200", "range_low": "800", "metric": "pearson", "min_score": "0.95",
        "rb0_label": "aromatic ring", "rb0_from": "1510", "rb0_to": "1480"})
    assert r.status_code == 303, r.text[:3000]
    spec_path = r.headers["location"].split("?")[0]
    assert "draft" in c.get(spec_path).text
    html, token = csrf(c, spec_path + "/approve")
    assert "I approve this record for use in testing." in html
    r = c.post(spec_path + "/approve", data={"csrf_token": token, "username": PEOPLE["qa"].username,
                                             "password": PASSWORD, "reason": "checked against the monograph"})
    assert r.status_code == 303
    page = c.get(spec_path).text
    assert "approved" in page and PEOPLE["qa"].printed_name in page


def test_reference_upload_without_file_or_with_a_wrong_file_saves_nothing(lab_site: Site) -> None:
    c = lab_site.client("qa")
    _, token = csrf(c, "/materials/TOL-01/references/new")
    before = _events(lab_site)
    r = c.post("/materials/TOL-01/references/new", data={"csrf_token": token, "preparation": ""})
    assert r.status_code == 422
    assert _field_error(r.text, "preparation") and _field_error(r.text, "file")
    r = c.post("/materials/TOL-01/references/new", data={"csrf_token": token, "preparation": "atr-diamond"},
               files={"file": ("note.pdf", WRONG_FILE, "application/pdf")})
    assert r.status_code == 422 and _field_error(r.text, "file")
    assert _events(lab_site) == before


def test_instrument_check_without_a_file_records_nothing(people_site: Site) -> None:
    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/instruments/FTIR-1")
    before = _events(people_site)
    r = c.post("/instruments/FTIR-1/checks", data={"csrf_token": token})
    assert r.status_code == 422 and "polystyrene" in _field_error(r.text, "file")
    assert _events(people_site) == before


def test_instrument_check_times_are_shown_and_a_future_film_time_is_refused_in_place(people_site: Site) -> None:
    from datetime import datetime, timedelta, timezone

    import records_spectra as sp

    _catalogue(people_site)
    c = people_site.client("tech")
    _, token = csrf(c, "/instruments/FTIR-1")
    before = _events(people_site)
    future = datetime.now(timezone.utc) + timedelta(hours=3)
    film = sp.synthetic_polystyrene_jcamp(time_lines=(f"##LONGDATE={future:%Y/%m/%d %H:%M:%S}",))
    r = c.post("/instruments/FTIR-1/checks", data={"csrf_token": token}, files={"file": ("ps.jdx", film, "text/plain")})
    assert r.status_code == 422 and "future" in _field_error(r.text, "file")
    assert "later than the server" in r.text and _events(people_site) == before
    measured = datetime.now(timezone.utc) - timedelta(days=3)
    film = sp.synthetic_polystyrene_jcamp(time_lines=(f"##LONGDATE={measured:%Y/%m/%d %H:%M:%S}",))
    r = c.post("/instruments/FTIR-1/checks", data={"csrf_token": token}, files={"file": ("ps.jdx", film, "text/plain")},
               follow_redirects=True)
    assert r.status_code == 200 and f"film measured {measured:%Y-%m-%d %H:%M}" in r.text and "recorded" in r.text
    page = c.get("/instruments").text
    assert f"measured {measured:%Y-%m-%d %H:%M}" in page and "not qualified" in page
    detail = c.get("/instruments/FTIR-1").text
    assert "Film measured" in detail and "passed but was measured" in detail


def test_audit_filter_with_a_bad_date_says_so(people_site: Site) -> None:
    c = people_site.client("qa")
    r = c.get("/audit?date_from=yesterday")
    assert r.status_code == 422 and "YYYY-MM-DD" in _field_error(r.text, "date_from")
    r = c.get("/audit")
    assert r.status_code == 200 and "Chain verified" in r.text
