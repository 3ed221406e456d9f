"""Use cases for instruments and their polystyrene film checks (Ph. Eur. 2.2.24, USP <854>).

An instrument is *qualified* while its most recent check (by the time its film was measured) passed
and is younger than the configured period (``settings.instrument_check_days``, default 1 day); a
failed check disqualifies until a newer passing one. Measurements on an instrument that is not
qualified are refused with a message that says what to do. Each check keeps the server's recording
time (``checked_at``, the audit time) and, when the file carries one, the film's measurement time
(``measured_at``); a file time in the future or long before the upload is refused (``CheckTimeRefused``).
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta

from sqlalchemy.engine import Connection, Engine
from sqlmodel import Session

from service.errors import BandgateError, Conflict, FieldProblem, InvalidInput
from service.release.actor import Actor
from service.release.digests import canonical_json
from service.release.qualification import CheckFacts, Standing, check_measurement_time, standing
from service.store import repositories as repo
from service.store import upload_records
from service.store.tables import Instrument, InstrumentCheck, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services import evaluator
from service.services.views import InstrumentCheckView, InstrumentView, utc

DEFAULT_CHECK_DAYS = 1.0


def _facts(c: InstrumentCheck | upload_records.CheckRow | None) -> CheckFacts | None:
    if c is None:
        return None
    return CheckFacts(passed=c.passed, recorded_at=utc(c.checked_at) or c.checked_at,  # type: ignore[arg-type]
                      measured_at=utc(c.measured_at))


def qualification(session: Session, inst: Instrument, *, check_days: float,
                  at: datetime | None = None) -> tuple[bool, datetime | None, datetime | None, str]:
    """(qualified, when the last passing check was measured, qualified until, plain-words status).

    The rule is ``service.release.qualification.standing``: the most recent check (by the time its
    film was measured) must have passed and be younger than ``check_days``.
    """
    st, facts = instrument_standing(session.connection(), instrument_id=inst.id, code=inst.code,  # type: ignore[arg-type]
                                    active=inst.active, check_days=check_days, at=at)
    if facts is not None and facts.passed:
        last_pass: datetime | None = facts.counts_from
    else:
        passing = _facts(repo.last_passing_check(session, inst.id))  # type: ignore[arg-type]
        last_pass = passing.counts_from if passing else None
    return st.qualified, last_pass, st.qualified_until, st.text


def instrument_standing(conn: Connection, *, instrument_id: int, code: str, active: bool, check_days: float,
                        at: datetime | None = None) -> tuple[Standing, CheckFacts | None]:
    """The instrument's standing at ``at`` (now by default), and the facts of its most recent check."""
    facts = _facts(upload_records.latest_check(conn, instrument_id))
    return standing(instrument=code, active=active, latest=facts, at=at or utc_now(),
                    period=timedelta(days=check_days)), facts


def _view(session: Session, inst: Instrument, check_days: float) -> InstrumentView:
    ok, last, until, text = qualification(session, inst, check_days=check_days)
    latest = repo.latest_check(session, inst.id)  # type: ignore[arg-type]
    return InstrumentView(id=inst.id or 0, code=inst.code, kind=inst.kind, location=inst.location,
                          active=inst.active, qualified=ok, last_passing_check_at=last, qualified_until=until,
                          status_text=text, last_check_passed=latest.passed if latest else None,
                          last_check_measured_at=utc(latest.measured_at) if latest else None,
                          last_check_recorded_at=utc(latest.checked_at) if latest else None)


def register_instrument(engine: Engine, actor: Actor, *, code: str, kind: str, location: str = "",
                        check_days: float = DEFAULT_CHECK_DAYS) -> InstrumentView:
    code = sh.require_text(code, "code", "the instrument identifier", max_len=64)
    kind = sh.require_text(kind, "kind", "the instrument type")
    with UnitOfWork(engine) as uow:
        if repo.instrument_by_code(uow.session, code):
            raise Conflict(f"an instrument {code!r} is registered already")
        inst = Instrument(code=code, kind=kind, location=(location or "").strip(), active=True,
                          created_at=utc_now(), created_by=actor.user_id)
        repo.add(uow.session, inst)
        sh.audit(uow.session, actor, "instrument.created", "instrument", inst.id,
                 new={"code": inst.code, "kind": inst.kind, "location": inst.location})
        uow.commit()
        return _view(uow.session, inst, check_days)


def get_instrument(engine: Engine, code: str, *, check_days: float = DEFAULT_CHECK_DAYS) -> InstrumentView:
    with UnitOfWork(engine, write=False) as uow:
        return _view(uow.session, sh.instrument(uow.session, code), check_days)


def list_instruments(engine: Engine, *, check_days: float = DEFAULT_CHECK_DAYS) -> list[InstrumentView]:
    with UnitOfWork(engine, write=False) as uow:
        return [_view(uow.session, i, check_days) for i in repo.list_instruments(uow.session)]


def _check_view(c: InstrumentCheck, code: str, sha: str) -> InstrumentCheckView:
    recorded = utc(c.checked_at) or c.checked_at
    return InstrumentCheckView(id=c.id or 0, instrument=code, passed=c.passed, result=json.loads(c.result),
                               file_name=c.file_name, sha256=sha, checked_at=recorded, checked_by=c.checked_by,
                               measured_at=utc(c.measured_at), counts_from=utc(c.measured_at) or recorded)


def record_instrument_check(engine: Engine, actor: Actor, *, instrument_code: str, data: bytes,
                            file_name: str = "") -> InstrumentCheckView:
    """Read a polystyrene film spectrum, run the check and keep file and result (also when unreadable)."""
    if not isinstance(data, (bytes, bytearray)):
        raise InvalidInput("the check file must be bytes", fields=[FieldProblem("file", "upload the spectrum file")])
    file_time: datetime | None = None
    try:
        spectrum = evaluator.read_spectrum(bytes(data), file_name=file_name)
        file_time = spectrum.meta.measured_at
        passed, result = evaluator.check_polystyrene(spectrum)
    except BandgateError as exc:
        passed, result = False, {"passed": False, "error": exc.message, "checks": []}
    with UnitOfWork(engine) as uow:
        inst = sh.instrument(uow.session, instrument_code)
        recorded = utc_now()
        measured = check_measurement_time(instrument=inst.code, measured_at=file_time, recorded_at=recorded)
        stored = repo.store_file(uow.session, bytes(data))
        check = InstrumentCheck(instrument_id=inst.id, file_id=stored.id, file_name=(file_name or "")[:255],
                                passed=passed, result=canonical_json(result), checked_at=recorded,
                                checked_by=actor.user_id, measured_at=measured)
        repo.add(uow.session, check)
        sh.audit(uow.session, actor, "instrument_check.recorded", "instrument_check", check.id,
                 new={"instrument": inst.code, "passed": passed, "sha256": stored.sha256, "size": stored.size,
                      "file_name": check.file_name, "result": result,
                      "measured_at": measured.isoformat() if measured else None})
        uow.commit()
        return _check_view(check, inst.code, stored.sha256)


def instrument_checks(engine: Engine, instrument_code: str, *, limit: int = 50) -> list[InstrumentCheckView]:
    with UnitOfWork(engine, write=False) as uow:
        inst = sh.instrument(uow.session, instrument_code)
        out = []
        for c in repo.checks_for(uow.session, inst.id, limit):  # type: ignore[arg-type]
            f = repo.file_by_id(uow.session, c.file_id)
            out.append(_check_view(c, inst.code, f.sha256 if f else ""))
        return out
