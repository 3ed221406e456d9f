"""`seed_demo`: every scenario of the demo ends in the verdicts and lot states it was built for.

The seeding runs once per module on a temporary SQLite demo database through the real use cases;
each test then reads the records back through the same use cases the pages call.
"""

from __future__ import annotations

import json
import os
import sqlite3
import subprocess
import sys
from pathlib import Path
from datetime import timedelta
from typing import Any

import pytest

from service import services as uc
from service.config import Mode, Settings
from service.services.security_accounts import create_user as create_person
from service.services import check_files
from service.services.demo import DEMO_DATA_DIR, DEMO_PEOPLE, DemoRefused, seed_demo
from service.services.security_sessions import sign_in
from service.store.demo_marker import SEEDED, demo_marker
from service.store.engine import make_engine
from service.store.migrations import upgrade

MANIFEST = json.loads((DEMO_DATA_DIR / "scenario.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def seeded(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    url = f"sqlite:///{tmp_path_factory.mktemp('demo') / 'demo.db'}"
    upgrade(url)
    settings = Settings(database_url=url, mode=Mode.demo)
    logins = seed_demo(settings)
    engine = make_engine(url)
    page, _total = uc.list_lots(engine)
    lots = {lot.supplier_lot: uc.get_lot(engine, lot.code) for lot in page}
    by_key = {s["key"]: lots[s["supplier_lot"]] for s in MANIFEST["lots"]}
    yield {"url": url, "settings": settings, "logins": logins, "engine": engine, "lots": by_key}
    engine.dispose()


def _verdicts(lot: Any) -> list[str | None]:
    return [m.verdict for m in sorted(lot.measurements, key=lambda m: (m.container, m.id))]


def _failed(m: Any) -> dict[str, dict[str, Any]]:
    assert m.evaluation is not None
    return {c["kind"]: c for c in m.evaluation.document["criteria"] if c["outcome"] == "fail"}


def test_people_of_every_role_are_created_with_their_logins(seeded: dict[str, Any]) -> None:
    assert {role for _u, _p, role in seeded["logins"]} == {"technician", "supervisor", "quality", "administrator"}
    users = {u.username: u for u in uc.list_users(seeded["engine"])}
    for person in DEMO_PEOPLE:
        assert person.role in users[person.username].roles


def test_every_material_has_an_approved_spec_reference_and_supplier(seeded: dict[str, Any]) -> None:
    engine = seeded["engine"]
    for m in MANIFEST["materials"]:
        spec = uc.effective_spec(engine, m["code"])
        assert spec.status == "approved" and spec.document["material"] == m["code"]
        assert [r.status for r in uc.list_references(engine, material_code=m["code"])] == ["approved"]
        assert any(a.active for a in uc.supplier_approvals(engine, m["code"]))


def test_one_instrument_is_qualified_and_the_other_has_a_passing_but_lapsed_check(seeded: dict[str, Any]) -> None:
    engine, days = seeded["engine"], seeded["settings"].instrument_check_days
    assert uc.get_instrument(engine, "FTIR-01", check_days=days).qualified
    ftir02 = uc.get_instrument(engine, "FTIR-02", check_days=days)
    assert not ftir02.qualified and ftir02.last_check_passed is True
    assert "passed but was measured" in ftir02.status_text
    (check,) = uc.instrument_checks(engine, "FTIR-02")
    assert check.passed and check.measured_at is not None
    # the film time (written into a copy of the file at seeding) is three days before the recording time
    age = check.checked_at - check.measured_at
    assert timedelta(days=3) - timedelta(minutes=5) < age < timedelta(days=3) + timedelta(minutes=5)
    _view, stored = check_files.instrument_check_file(engine, check.id)
    assert b"##LONGDATE=" in stored and b"SYNTHETIC DEMO DATA - measurement date written" in stored


def test_clean_pass_awaits_qa_disposition(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["clean-pass"]
    assert _verdicts(lot) == ["pass", "pass"]
    assert lot.state == "awaiting_disposition"


def test_wet_lot_fails_its_forbidden_o_h_band(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["wet"]
    assert _verdicts(lot) == ["fail"] and lot.state == "awaiting_review"
    failed = _failed(lot.measurements[0])
    assert set(failed) == {"forbidden_band"} and "O-H" in failed["forbidden_band"]["label"]


def test_mix_up_fails_the_fingerprint_and_names_the_material_in_the_container(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["mix-up"]
    assert _verdicts(lot) == ["pass", "fail"] and lot.state == "awaiting_review"
    failed = _failed(sorted(lot.measurements, key=lambda m: m.container)[1])
    assert "fingerprint" in failed
    assert failed["specificity"]["details"]["closest_other_material"] == "SOL-202"


def test_contaminated_lot_fails_on_the_extra_carbonyl_only(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["contaminated"]
    assert _verdicts(lot) == ["fail"] and lot.state == "awaiting_review"
    failed = _failed(lot.measurements[0])
    assert set(failed) == {"forbidden_band"} and "C=O" in failed["forbidden_band"]["label"]


def test_saturated_measurement_is_invalid_and_the_lot_waits_for_a_new_one(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["invalid"]
    assert _verdicts(lot) == ["invalid"] and lot.state == "testing"
    assert any(c["kind"] == "quality" for c in _failed(lot.measurements[0]).values())


def test_upload_on_the_unqualified_instrument_is_kept_but_refused(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["instrument-lapsed"]
    assert lot.state == "quarantine"
    (m,) = lot.measurements
    assert m.status == "refused" and m.evaluation is None
    assert "passed but was measured" in m.reason and "older than 1 day(s)" in m.reason
    assert "run the polystyrene check on FTIR-02 and upload it, then measure again" in m.reason


def test_failed_lot_was_reviewed_and_rejected_with_a_signature(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["rejected"]
    assert _verdicts(lot) == ["fail"] and lot.state == "rejected"
    sig = next(s for s in lot.signatures if s.meaning == "rejected")
    assert sig.printed_name == "Ines Calloway" and sig.reason


def test_conforming_lot_was_released_by_qa_with_a_signature(seeded: dict[str, Any]) -> None:
    lot = seeded["lots"]["released"]
    assert _verdicts(lot) == ["pass", "pass"] and lot.state == "released"
    sig = next(s for s in lot.signatures if s.meaning == "released")
    assert sig.printed_name == "Ruth Okafor"


def test_audit_trail_verifies_after_seeding(seeded: dict[str, Any]) -> None:
    report = uc.verify_audit(seeded["engine"])
    assert report.ok, report.first_problem
    assert report.signatures >= 8 + 8 + 2  # spec and reference approvals, review, release


def test_second_run_reuses_the_seeded_database(seeded: dict[str, Any]) -> None:
    engine = seeded["engine"]
    before = (uc.list_lots(engine)[1], uc.verify_audit(engine).events)
    assert seed_demo(seeded["settings"]) == seeded["logins"]
    assert (uc.list_lots(engine)[1], uc.verify_audit(engine).events) == before
    assert demo_marker(engine) == SEEDED


def test_every_printed_login_signs_in(seeded: dict[str, Any]) -> None:
    for username, password, role in seeded["logins"]:
        signed = sign_in(seeded["engine"], username=username, password=password, address="127.0.0.1")
        assert role in signed.actor.roles and not signed.must_change_password


@pytest.fixture
def seeded_copy(seeded: dict[str, Any], tmp_path: Path) -> Any:
    """A private copy of the seeded demo database (SQLite online backup), for tests that change it."""
    src = sqlite3.connect(seeded["url"].removeprefix("sqlite:///"))
    dst_path = tmp_path / "copy.db"
    dst = sqlite3.connect(dst_path)
    src.backup(dst)
    src.close()
    dst.close()
    engine = make_engine(f"sqlite:///{dst_path}")
    yield engine
    engine.dispose()


def _upload(engine: Any, lot_code: str, file: str, instrument: str) -> Any:
    tech = uc.get_actor(engine, "t.ferrier")
    path = DEMO_DATA_DIR / file
    return uc.record_measurement(engine, tech, lot_code=lot_code, container=1, instrument_code=instrument,
                                 data=path.read_bytes(), file_name=path.name)


def test_tour_the_repeat_measurement_of_the_invalid_lot_passes(seeded: dict[str, Any], seeded_copy: Any) -> None:
    code = seeded["lots"]["invalid"].code
    m = _upload(seeded_copy, code, "samples/SOL-204_lot-PEL-GLY-1187_c1_remeasured.jdx", "FTIR-01")
    assert m.verdict == "pass"
    assert uc.get_lot(seeded_copy, code).state == "awaiting_disposition"


def test_tour_a_passing_check_requalifies_the_instrument(seeded: dict[str, Any], seeded_copy: Any) -> None:
    code = seeded["lots"]["instrument-lapsed"].code
    tech = uc.get_actor(seeded_copy, "t.ferrier")
    check = DEMO_DATA_DIR / "instrument/polystyrene-film_pass.jdx"
    assert uc.record_instrument_check(seeded_copy, tech, instrument_code="FTIR-02", data=check.read_bytes(),
                                      file_name=check.name).passed
    m = _upload(seeded_copy, code, "samples/EXC-104_lot-ARD-PV-7702_c1.jdx", "FTIR-02")
    assert m.verdict == "pass"
    lot = uc.get_lot(seeded_copy, code)
    assert lot.state == "awaiting_disposition"
    assert [x.status for x in sorted(lot.measurements, key=lambda x: x.id)] == ["refused", "accepted"]


def test_reused_demo_records_a_new_morning_check_when_the_old_one_lapsed(seeded: dict[str, Any],
                                                                          seeded_copy: Any) -> None:
    url = str(seeded_copy.url)
    before = len(uc.instrument_checks(seeded_copy, "FTIR-01"))
    lapsed_at_once = Settings(database_url=url, mode=Mode.demo, instrument_check_days=1e-9)
    seed_demo(lapsed_at_once)
    assert len(uc.instrument_checks(seeded_copy, "FTIR-01")) == before + 1
    seed_demo(Settings(database_url=url, mode=Mode.demo))  # the default period: still qualified, nothing new
    assert len(uc.instrument_checks(seeded_copy, "FTIR-01")) == before + 1


def test_refuses_outside_demo_mode(sqlite_url: str) -> None:
    upgrade(sqlite_url)
    with pytest.raises(DemoRefused, match="demo mode"):
        seed_demo(Settings(database_url=sqlite_url, mode=Mode.dev))


def test_refuses_a_database_with_records_that_is_not_the_demo_one(db_url: str) -> None:
    engine = make_engine(db_url)
    try:
        create_person(engine, username="a.real", printed_name="A Real Person", roles=["quality"],
                      password="a-real-installation-9913")
        uc.create_material(engine, uc.get_actor(engine, "a.real"), code="RM-1", name="Real material")
        with pytest.raises(DemoRefused, match="not a demo database"):
            seed_demo(Settings(database_url=db_url, mode=Mode.demo))
        assert demo_marker(engine) is None
        assert [m.code for m in uc.list_materials(engine)] == ["RM-1"]
    finally:
        engine.dispose()


def test_demo_data_folder_is_found_from_the_installed_package() -> None:
    assert (DEMO_DATA_DIR / "scenario.json").is_file() and DEMO_DATA_DIR == Path(__file__).parents[2] / "demo_data"


@pytest.mark.slow
@pytest.mark.postgres
def test_the_demo_seeds_on_postgresql_too(postgres_url: str) -> None:
    upgrade(postgres_url)
    settings = Settings(database_url=postgres_url, mode=Mode.demo)
    assert seed_demo(settings) == [(p.username, p.password, p.role) for p in DEMO_PEOPLE]
    engine = make_engine(postgres_url)
    try:
        page, total = uc.list_lots(engine)
        states = {lot.supplier_lot: lot.state for lot in page}
        assert total == len(MANIFEST["lots"])
        assert states["ARD-LM-31170"] == "released" and states["ARD-PV-7655"] == "rejected"
        assert states["BRF-2611-IP"] == "awaiting_review" and states["PEL-GLY-1187"] == "testing"
        assert uc.verify_audit(engine).ok
        assert demo_marker(engine) == SEEDED
    finally:
        engine.dispose()


@pytest.mark.slow
def test_bandgate_demo_refuses_a_real_database_before_migrating_it(tmp_path: Path) -> None:
    # A database of another application (or an older installation): tables with rows, no demo marker.
    path = tmp_path / "real.db"
    with sqlite3.connect(path) as conn:
        conn.execute("CREATE TABLE lots (code TEXT)")
        conn.execute("INSERT INTO lots VALUES ('L-1')")
    env = dict(os.environ, BANDGATE_DATABASE_URL=f"sqlite:///{path}", PYTHONPATH=str(Path(__file__).parents[2]))
    r = subprocess.run([sys.executable, "-m", "service", "demo", "--port", "1"], capture_output=True, text=True,
                       env=env, timeout=120)
    assert r.returncode == 2 and "not a demo database" in r.stderr and "Traceback" not in r.stderr
    with sqlite3.connect(path) as conn:
        tables = {row[0] for row in conn.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    assert tables == {"lots"}  # not migrated, not seeded
