"""Verify the audit trail and export a lot's record in plain form (EU GMP Annex 11 §9; 21 CFR 11.10(e)).

``verify_audit`` recomputes the hash chain, every stored file's SHA-256 and every signature's
record digest, and reports the first broken link in words.
"""

from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy.engine import Engine

from service.errors import NotFound
from service.store import repositories as repo
from service.store.audit import AuditEvent, audited_lot_states, check_chain, events_for, events_for_records
from service.store.signed_content import digest_of
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services.lots import lot_view
from service.services.views import utc


@dataclass(frozen=True, kw_only=True)
class AuditReport:
    ok: bool
    events: int
    files: int
    signatures: int
    problems: tuple[str, ...] = field(default=())

    @property
    def first_problem(self) -> str | None:
        return self.problems[0] if self.problems else None

    def as_dict(self) -> dict[str, Any]:
        return {"ok": self.ok, "events": self.events, "files": self.files, "signatures": self.signatures,
                "first_problem": self.first_problem, "problems": list(self.problems)}


def verify_audit(engine: Engine) -> AuditReport:
    """Recompute the chain, file hashes and signature digests, and compare each lot's state with the
    state its audit events last recorded; ``ok`` only if all hold."""
    problems: list[str] = []
    with UnitOfWork(engine, write=False) as uow:
        s = uow.session
        count, chain_problems = check_chain(s)
        problems.extend(str(p) for p in chain_problems)
        files = 0
        for fid, stored_sha, stored_size, actual_sha, actual_size in repo.iter_file_digests(s):
            files += 1
            if stored_sha != actual_sha or stored_size != actual_size:
                problems.append(f"stored file {fid}: its bytes no longer match the SHA-256 recorded at upload "
                                f"({stored_sha[:12]}... recorded, {actual_sha[:12]}... now)")
        audited = audited_lot_states(s)
        for lot_id, (code, state) in sorted(repo.lot_states(s).items()):
            if audited.get(str(lot_id)) != state:
                problems.append(f"lot {code}: its state '{state}' is not the one the audit trail last recorded "
                                f"('{audited.get(str(lot_id), 'none')}'); it was changed outside Bandgate")
        sigs = repo.iter_signatures(s)
        for sig in sigs:
            try:
                now = digest_of(s, sig.record_type, sig.record_id)
            except NotFound:
                problems.append(f"signature {sig.id} ({sig.meaning} by {sig.printed_name}): the signed "
                                f"{sig.record_type} {sig.record_id} is missing")
                continue
            if now != sig.digest:
                problems.append(f"signature {sig.id} ({sig.meaning} by {sig.printed_name}): "
                                f"{sig.record_type} {sig.record_id} has changed since it was signed")
    return AuditReport(ok=not problems, events=count, files=files, signatures=len(sigs), problems=tuple(problems))


def event_dict(ev: AuditEvent) -> dict[str, Any]:
    return {
        "seq": ev.seq, "occurred_at": utc(ev.occurred_at).isoformat(), "user_id": ev.user_id,  # type: ignore[union-attr]
        "username": ev.username, "action": ev.action, "record_type": ev.record_type, "record_id": ev.record_id,
        "old_values": json.loads(ev.old_values), "new_values": json.loads(ev.new_values), "reason": ev.reason,
        "prev_hash": ev.prev_hash, "hash": ev.hash,
    }


def audit_events(engine: Engine, *, record_type: str | None = None, record_id: str | None = None,
                 username: str | None = None, limit: int = 100, offset: int = 0) -> list[dict[str, Any]]:
    limit = max(1, min(int(limit), 1000))
    with UnitOfWork(engine, write=False) as uow:
        return [event_dict(e) for e in events_for(uow.session, record_type=record_type, record_id=record_id,
                                                   username=username, limit=limit, offset=max(0, int(offset)))]


def lot_record(engine: Engine, lot_code: str) -> dict[str, Any]:
    """The whole record of a lot: header, plan, containers, measurements, signatures, and its audit events."""
    with UnitOfWork(engine, write=False) as uow:
        s = uow.session
        lot = sh.lot(s, lot_code)
        view = lot_view(s, lot)
        ms = [m.id for m in view.measurements]
        evs = [m.evaluation.id for m in view.measurements if m.evaluation]
        sig_ids = [sg.id for sg in view.signatures] + [sg.id for m in view.measurements for sg in m.signatures]
        conts = [c.id for c in repo.containers(s, lot.id) if c.id is not None]  # type: ignore[arg-type]
        events = events_for_records(s, {"lot": [lot.id], "measurement": ms, "evaluation": evs,  # type: ignore[list-item]
                                        "signature": sig_ids, "lot_container": conts})
        changed_after_entry = any(e.action.endswith((".changed", ".invalidated")) for e in events)
        return {"lot": view.as_dict(), "audit_events": [event_dict(e) for e in events],
                "changed_after_first_entry": changed_after_entry,
                "caution": "A computed result is advice to the quality unit, not a release; local procedures govern."}


def export_lot(engine: Engine, lot_code: str, *, fmt: str = "json") -> str:
    """The lot record as JSON, or as CSV (one row per fact: section, when, who, what, detail)."""
    record = lot_record(engine, lot_code)
    if fmt == "json":
        return json.dumps(record, indent=2, ensure_ascii=False)
    lot = record["lot"]
    out = io.StringIO()
    w = csv.writer(out)
    w.writerow(["section", "when_utc", "who", "what", "detail"])
    w.writerow(["lot", lot["created_at"], lot["received_by"] or lot["created_by"], f"lot {lot['code']}",
                f"material {lot['material']} ({lot['material_name']}); supplier {lot['supplier']} lot "
                f"{lot['supplier_lot']}; {lot['containers_received']} containers; state: {lot['state_label']}"])
    w.writerow(["plan", lot["created_at"], "", lot["plan"]["kind"], lot["plan"]["reason"]
                + f"; containers tested: {', '.join(str(n) for n in lot['plan']['selected'])}"])
    for m in lot["measurements"]:
        w.writerow(["measurement", m["received_at"], m["operator"], f"measurement {m['id']} container {m['container']}",
                    f"{m['status']}; verdict {m['verdict'] or '-'}; sha256 {m['sha256']}; file {m['file_name']!r}; "
                    f"instrument {m['instrument']}" + (f"; reason: {m['reason']}" if m["reason"] else "")
                    + (f"; invalidated: {m['invalidation_cause']}" if m["invalidated"] else "")
                    + (f"; retest of {m['retest_of_id']}" if m["retest_of_id"] else "")])
    for sig in lot["signatures"] + [sg for m in lot["measurements"] for sg in m["signatures"]]:
        w.writerow(["signature", sig["signed_at"], sig["printed_name"], sig["meaning"],
                    f"{sig['meaning_text']} Reason: {sig['reason'] or '-'}; {sig['record_type']} {sig['record_id']}; "
                    f"digest {sig['digest']}"])
    for e in record["audit_events"]:
        w.writerow(["audit", e["occurred_at"], e["username"], e["action"],
                    f"{e['record_type']} {e['record_id']}; old {json.dumps(e['old_values'], ensure_ascii=False)}; "
                    f"new {json.dumps(e['new_values'], ensure_ascii=False)}"
                    + (f"; reason: {e['reason']}" if e["reason"] else "")])
    w.writerow(["caution", "", "", "", record["caution"]])
    return out.getvalue()
