"""Concurrency and durability: two processes racing to decide one lot; a writer killed mid-upload."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import text

from service import services as uc
import records_spectra as sp
from records_factories import receive

ROOT = Path(__file__).resolve().parents[2]
TESTS = ROOT / "tests"

RACER = r"""
import sys, time
from service import services as uc
from service.errors import Conflict
from service.store.engine import make_engine
url, lot_code, username, start_at = sys.argv[1], sys.argv[2], sys.argv[3], float(sys.argv[4])
engine = make_engine(url)
actor = uc.get_actor(engine, username)
while time.time() < start_at:
    time.sleep(0.001)
try:
    uc.dispose_lot(engine, actor, lot_code=lot_code, outcome="released", reason="race")
    print("DECIDED")
except Conflict as exc:
    print("REFUSED", type(exc).__name__, exc)
"""

KILLED_WRITER = r"""
import sys, time
from pathlib import Path
from sqlalchemy import event
from service import services as uc
from service.store.audit import HEAD_KEY
from service.store.engine import make_engine
url, lot_code, marker, data_path = sys.argv[1], sys.argv[2], Path(sys.argv[3]), sys.argv[4]
engine = make_engine(url)
actor = uc.get_actor(engine, "tina.tech")

@event.listens_for(engine, "commit")
def _hold_before_commit(conn):
    # Instrumentation for the test only: the one transaction here that appends audit events is the
    # upload's; at its commit the measurement, its file, its evaluation and audit events are written
    # but not committed. Say so (with what is in the transaction), then wait to be killed.
    if conn.info.get(HEAD_KEY):
        written = conn.exec_driver_sql("SELECT COUNT(*) FROM measurements WHERE file_name = 'killed.csv'").scalar()
        marker.write_text(f"in transaction: {written} measurement")
        time.sleep(60)

uc.record_measurement(engine, actor, lot_code=lot_code, container=1, instrument_code="FTIR-1",
                      data=Path(data_path).read_bytes(), file_name="killed.csv")
print("COMMITTED")
"""


def _env() -> dict[str, str]:
    return dict(os.environ, PYTHONPATH=f"{ROOT}{os.pathsep}{TESTS}")


@pytest.mark.slow
def test_two_processes_racing_to_decide_a_lot_make_exactly_one_decision(lab) -> None:  # type: ignore[no-untyped-def]
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=1)
    uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code="FTIR-1",
                          data=sp.real_csv("toluene", noise=0.002), file_name="t.csv")
    assert uc.get_lot(lab.engine, lot.code).state == "awaiting_disposition"
    from records_factories import make_user

    make_user(lab.engine, "quentin.qa", roles=("quality",), printed_name="Quentin QA")
    start_at = time.time() + 2.5  # both start at the same instant, after their imports
    procs = [subprocess.Popen([sys.executable, "-c", RACER, lab.url, lot.code, who, str(start_at)],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT)
             for who in ("quinn.qa", "quentin.qa")]
    outs = [p.communicate(timeout=120) for p in procs]
    results = [o[0].strip() for o in outs]
    assert all(p.returncode == 0 for p in procs), [o[1] for o in outs]
    assert sorted(r.split()[0] for r in results) == ["DECIDED", "REFUSED"], results
    with lab.engine.connect() as conn:
        assert conn.execute(text("SELECT COUNT(*) FROM lot_decisions")).scalar_one() == 1
        assert conn.execute(text("SELECT COUNT(*) FROM signatures WHERE meaning = 'released'")).scalar_one() == 1
    final = uc.get_lot(lab.engine, lot.code)
    assert final.state == "released" and len(final.signatures) == 1
    report = uc.verify_audit(lab.engine)
    assert report.ok, report.problems


@pytest.mark.slow
def test_writer_killed_mid_upload_leaves_no_partial_record(lab, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=1)
    upload = tmp_path / "upload.csv"
    upload.write_bytes(sp.real_csv("toluene", noise=0.002, seed=9))
    marker = tmp_path / "in-transaction"

    def counts() -> dict[str, int]:
        with lab.engine.connect() as conn:
            return {t: conn.execute(text(f"SELECT COUNT(*) FROM {t}")).scalar_one()
                    for t in ("measurements", "stored_files", "evaluations", "audit_events", "lot_containers")}

    before = counts()
    proc = subprocess.Popen([sys.executable, "-c", KILLED_WRITER, lab.url, lot.code, str(marker), str(upload)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT)
    try:
        deadline = time.monotonic() + 90
        while not marker.exists():
            if proc.poll() is not None:
                pytest.fail(f"writer ended before the commit: {proc.communicate()}")
            if time.monotonic() > deadline:
                pytest.fail("writer never reached its commit")
            time.sleep(0.02)
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == -signal.SIGKILL
    assert marker.read_text() == "in transaction: 1 measurement"  # killed with the upload written, uncommitted
    assert counts() == before  # nothing of the killed upload is in the database
    assert uc.get_lot(lab.engine, lot.code).state == "quarantine"
    report = uc.verify_audit(lab.engine)
    assert report.ok, report.problems
    # and the database takes the same upload normally afterwards (the write lock was released)
    done = uc.record_measurement(lab.engine, lab.tech, lot_code=lot.code, container=1, instrument_code="FTIR-1",
                                 data=upload.read_bytes(), file_name="again.csv")
    assert done.verdict == "pass" and uc.verify_audit(lab.engine).ok


UPLOADER = r"""
import sys, time
from pathlib import Path
from service import services as uc
from service.store.engine import make_engine
url, lot_code, container, data_path, start_at = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4], float(sys.argv[5])
engine = make_engine(url)
actor = uc.get_actor(engine, "tina.tech")
data = Path(data_path).read_bytes()
while time.time() < start_at:
    time.sleep(0.001)
view = uc.record_measurement(engine, actor, lot_code=lot_code, container=container, instrument_code="FTIR-1",
                             data=data, file_name=f"c{container}.csv")
print(view.verdict)
"""


@pytest.mark.slow
def test_concurrent_uploads_keep_one_unforked_chain(lab, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    lot = receive(lab.engine, lab.tech, material_code="TOL-01", supplier_name="Northwind Solvents", containers=3)
    start_at = time.time() + 2.5
    procs = []
    for number in (1, 2, 3):
        upload = tmp_path / f"c{number}.csv"
        upload.write_bytes(sp.real_csv("toluene", noise=0.002, seed=number))
        procs.append(subprocess.Popen(
            [sys.executable, "-c", UPLOADER, lab.url, lot.code, str(number), str(upload), str(start_at)],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env(), cwd=ROOT))
    outs = [p.communicate(timeout=180) for p in procs]
    assert [p.returncode for p in procs] == [0, 0, 0], [o[1][-500:] for o in outs]
    assert [o[0].strip() for o in outs] == ["pass", "pass", "pass"]
    final = uc.get_lot(lab.engine, lot.code)
    assert final.state == "awaiting_disposition" and all(c.outcome == "passed" for c in final.containers)
    with lab.engine.connect() as conn:
        seqs = list(conn.execute(text("SELECT seq FROM audit_events ORDER BY seq")).scalars())
    assert seqs == list(range(1, len(seqs) + 1))
    assert uc.verify_audit(lab.engine).ok
