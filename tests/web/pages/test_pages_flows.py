"""Signed steps through the pages: invalidate with a cause (retest allowed), QA release; queues by role."""

from __future__ import annotations

import re
from datetime import date

import pytest

from pages_site import Site, csrf
from pages_lab import PASSWORD, PEOPLE, failing_upload, passing_upload
from service import services as uc


def _lot_with(site: Site, uploads: list[bytes]) -> str:
    tech = uc.get_actor(site.engine, PEOPLE["tech"].username)
    code = uc.receive_lot(site.engine, tech, material_code="TOL-01", supplier_name="Northwind Solvents",
                          supplier_lot="NS-5", containers=len(uploads), received_on=date(2026, 12, 1)).code
    for i, data in enumerate(uploads, start=1):
        uc.record_measurement(site.engine, tech, lot_code=code, container=i, instrument_code="FTIR-1",
                              data=data, file_name=f"c{i}.csv")
    return code


def _sign(client, path: str, who: str, reason: str, **extra: str):  # type: ignore[no-untyped-def]
    html, token = csrf(client, path)
    data = {"csrf_token": token, "reason": reason, "username": PEOPLE[who].username, "password": PASSWORD, **extra}
    return html, client.post(path.split("?")[0], data=data)


def test_invalidating_a_measurement_is_signed_and_the_record_says_so(lab_site: Site) -> None:
    code = _lot_with(lab_site, [passing_upload(), failing_upload()])
    failing = [m for m in uc.get_lot(lab_site.engine, code).measurements if m.verdict == "fail"][0]
    sup = lab_site.client("sup")
    review = sup.get(f"/lots/{code}/review").text
    assert f"/lots/{code}/review/invalidate?measurement={failing.id}" in review
    html, r = _sign(sup, f"/lots/{code}/review/invalidate?measurement={failing.id}", "sup",
                    "ATR crystal not cleaned after the previous sample (lab note 14)", measurement=str(failing.id))
    assert "I set this measurement aside" in html
    assert r.status_code == 303, r.text[:2000]
    lot = uc.get_lot(lab_site.engine, code)
    assert lot.state == "testing"  # the container may be retested
    page = sup.get(f"/lots/{code}").text
    assert "invalidated" in page and "lab note 14" in page
    assert "set aside after first entry" in page  # the changes line says so
    assert PEOPLE["sup"].printed_name in page  # with the signature's manifestation


def test_quality_releases_a_conforming_lot_with_a_signature(lab_site: Site) -> None:
    code = _lot_with(lab_site, [passing_upload()])
    assert uc.get_lot(lab_site.engine, code).state == "awaiting_disposition"
    qa = lab_site.client("qa")
    queue = qa.get("/").text
    assert code in queue.split('id="q-awaiting_disposition"')[1]
    assert "Release lot" in qa.get(f"/lots/{code}/disposition").text
    html, r = _sign(qa, f"/lots/{code}/disposition/release", "qa", "")
    assert "I release this lot" in html
    assert r.status_code == 303, r.text[:2000]
    page = qa.get(f"/lots/{code}").text
    assert "released by QA" in page and PEOPLE["qa"].printed_name in page


def test_search_finds_a_lot_by_supplier_lot(lab_site: Site) -> None:
    code = _lot_with(lab_site, [passing_upload()])
    page = lab_site.client("tech").get("/?q=NS-5").text
    assert f'href="/lots/{code}"' in page.split("Lots matching")[1]


@pytest.mark.postgres
def test_review_rejection_through_the_pages_on_postgresql(lab_site_pg: Site) -> None:
    code = _lot_with(lab_site_pg, [passing_upload(), failing_upload()])
    sup = lab_site_pg.client("sup")
    _, r = _sign(sup, f"/lots/{code}/review/reject", "sup", "heptanes delivered as toluene")
    assert r.status_code == 303, r.text[:2000]
    lot = uc.get_lot(lab_site_pg.engine, code)
    assert lot.state == "rejected" and lot.signatures[0].printed_name == PEOPLE["sup"].printed_name
    assert uc.verify_audit(lab_site_pg.engine).ok


def test_suggest_from_reference_fills_band_rows_with_group_frequency_hints(lab_site: Site) -> None:
    qa = lab_site.client("qa")
    _, token = csrf(qa, "/materials/TOL-01/specs/new")
    before = len(uc.audit_events(lab_site.engine, limit=1000))
    r = qa.post("/materials/TOL-01/specs/new", data={"csrf_token": token, "band_rows": "3", "forbidden_rows": "2",
                                                     "suggest": "1", "name": "Toluene", "preparation": "atr-diamond"})
    assert r.status_code == 200
    assert "Check every row" in r.text
    # toluene's aromatic ring stretch near 1495 cm⁻¹ (UMass OWL / UCLA tables: aromatic ring 1500–1400)
    row = re.search(r'name="rb(\d+)_label" type="text" value="band at 149\d"', r.text)
    assert row, "no row for toluene's band near 1495 cm⁻¹"
    hint = r.text.split(f'name="rb{row.group(1)}_hint" value="')[1].split('"')[0]
    assert "aromatic ring (1500–1400" in hint
    assert len(uc.audit_events(lab_site.engine, limit=1000)) == before  # a suggestion saves nothing
