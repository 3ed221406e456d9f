"""The audit chain: hash-linked, gap-free, fork-proof; edits made behind the triggers' back are caught."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import text
from sqlalchemy.exc import IntegrityError

from service import services as uc
from service.release import GENESIS_HASH
from service.store.audit import SYSTEM_ACTOR, append_event, check_chain
from service.store.engine import make_engine
from service.store.tables import AuditEvent
from service.store.unit_of_work import UnitOfWork
from records_factories import make_material, make_people

ROOT = Path(__file__).resolve().parents[2]


def _drop_triggers(engine, table: str) -> None:  # type: ignore[no-untyped-def]
    with engine.begin() as conn:
        if engine.dialect.name == "sqlite":
            conn.execute(text(f"DROP TRIGGER {table}_no_update"))
            conn.execute(text(f"DROP TRIGGER {table}_no_delete"))
        else:
            conn.execute(text(f"ALTER TABLE {table} DISABLE TRIGGER USER"))


def test_chain_links_every_event_to_the_one_before(db_url: str) -> None:
    engine = make_engine(db_url)
    people = make_people(engine)
    make_material(engine, people["qa"])
    with UnitOfWork(engine, write=False) as uow:
        events = uow.session.exec(__import__("sqlmodel").select(AuditEvent).order_by(AuditEvent.seq)).all()
        count, problems = check_chain(uow.session)
    assert problems == [] and count == len(events) >= 7
    assert events[0].prev_hash == GENESIS_HASH and events[0].seq == 1
    for before, after in zip(events, events[1:]):
        assert after.prev_hash == before.hash and after.seq == before.seq + 1
    assert uc.verify_audit(engine).ok
    engine.dispose()


def test_a_forked_append_is_refused_by_the_database(db_url: str) -> None:
    engine = make_engine(db_url)
    make_people(engine)
    with UnitOfWork(engine) as uow:
        first = uow.session.exec(__import__("sqlmodel").select(AuditEvent).order_by(AuditEvent.seq)).first()
        fork = AuditEvent(seq=999, occurred_at=first.occurred_at, user_id=None, username="x", action="fork",
                          record_type="x", record_id="1", old_values="{}", new_values="{}", reason="",
                          prev_hash=first.prev_hash, hash="f" * 64)
        uow.session.add(fork)
        with pytest.raises(IntegrityError):
            uow.flush()
    engine.dispose()


def test_unit_of_work_rolls_back_unless_committed(db_url: str) -> None:
    engine = make_engine(db_url)
    with UnitOfWork(engine) as uow:
        append_event(uow.session, actor=SYSTEM_ACTOR, action="test.uncommitted", record_type="test", record_id=1)
    with pytest.raises(RuntimeError):
        with UnitOfWork(engine) as uow:
            append_event(uow.session, actor=SYSTEM_ACTOR, action="test.failed", record_type="test", record_id=2)
            raise RuntimeError("use case failed half-way")
    with UnitOfWork(engine) as uow:
        append_event(uow.session, actor=SYSTEM_ACTOR, action="test.committed", record_type="test", record_id=3)
        uow.commit()
    assert [e["action"] for e in uc.audit_events(engine)] == ["test.committed"]
    engine.dispose()


def test_a_failing_use_case_leaves_no_trace(db_url: str) -> None:
    engine = make_engine(db_url)
    people = make_people(engine)
    before = len(uc.audit_events(engine, limit=1000))
    with pytest.raises(Exception):
        uc.create_material(engine, people["qa"], code="EXC-1", name="")  # missing name: InvalidInput
    uc.create_material(engine, people["qa"], code="EXC-1", name="Thing")
    with pytest.raises(Exception, match="exists already"):
        uc.create_material(engine, people["qa"], code="EXC-1", name="Thing")
    assert len(uc.audit_events(engine, limit=1000)) == before + 1
    engine.dispose()


def _cli(db_url: str, *args: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, BANDGATE_DATABASE_URL=db_url, PYTHONPATH=str(ROOT))
    return subprocess.run([sys.executable, "-m", "service", *args], capture_output=True, text=True, cwd=ROOT,
                          env=env, timeout=120)


def test_edit_with_triggers_dropped_is_caught_by_audit_verify_naming_the_event(db_url: str) -> None:
    engine = make_engine(db_url)
    people = make_people(engine)
    make_material(engine, people["qa"])
    ok = _cli(db_url, "audit", "verify")
    assert ok.returncode == 0, ok.stderr
    assert "no broken link" in ok.stdout
    _drop_triggers(engine, "audit_events")
    with UnitOfWork(engine, write=False) as uow:
        target = uow.session.exec(__import__("sqlmodel").select(AuditEvent)
                                  .where(AuditEvent.action == "material.created")).one()
    with engine.begin() as conn:
        conn.execute(text("UPDATE audit_events SET new_values = :v WHERE seq = :s"),
                     {"v": '{"code":"EXC-104","name":"Something else"}', "s": target.seq})
    bad = _cli(db_url, "audit", "verify")
    assert bad.returncode == 1
    assert f"audit event #{target.seq}" in bad.stderr and "material.created" in bad.stderr
    as_json = _cli(db_url, "audit", "verify", "--json")
    assert as_json.returncode == 1 and f"#{target.seq}" in __import__("json").loads(as_json.stdout)["first_problem"]
    report = uc.verify_audit(engine)
    assert not report.ok and f"#{target.seq}" in (report.first_problem or "")
    engine.dispose()


def test_a_deleted_event_in_the_middle_is_caught(db_url: str) -> None:
    engine = make_engine(db_url)
    make_people(engine)
    _drop_triggers(engine, "audit_events")
    with engine.begin() as conn:
        conn.execute(text("DELETE FROM audit_events WHERE seq = 2"))
    report = uc.verify_audit(engine)
    assert not report.ok and "audit event #3" in (report.first_problem or "")
    assert "missing" in (report.first_problem or "")
    engine.dispose()
