"""Use cases for instruments and their polystyrene film checks (Ph. Eur. 2.2.24, USP <854>).

An instrument is *qualified* while its last passing check is younger than the configured
period (``settings.instrument_check_days``, default 1 day); measurements on an instrument that
is not qualified are refused with a message that says what to do.
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta

from sqlalchemy.engine import Engine
from sqlmodel import Session

from service.errors import BandgateError, Conflict, FieldProblem, InvalidInput
from service.release.actor import Actor
from service.release.digests import canonical_json
from service.store import repositories as repo
from service.store.tables import Instrument, InstrumentCheck, utc_now
from service.store.unit_of_work import UnitOfWork
from service.services import _shared as sh
from service.services import evaluator
from service.services.views import InstrumentCheckView, InstrumentView, utc

DEFAULT_CHECK_DAYS = 1.0


def qualification(session: Session, inst: Instrument, *, check_days: float,
                  at: datetime | None = None) -> tuple[bool, datetime | None, datetime | None, str]:
    """(qualified, last passing check time, qualified until, plain-words status)."""
    at = at or utc_now()
    if not inst.active:
        return False, None, None, f"instrument {inst.code} is retired; use another instrument"
    last = repo.last_passing_check(session, inst.id)  # type: ignore[arg-type]
    if last is None:
        return False, None, None, (f"instrument {inst.code} has no passing polystyrene check; "
                                   "record a passing check before measuring")
    checked = utc(last.checked_at)
    until = checked + timedelta(days=check_days)  # type: ignore[operator]
    if at >= until:
        return False, checked, until, (f"instrument {inst.code} is not qualified: its last passing polystyrene "
                                       f"check ({checked:%Y-%m-%d %H:%M} UTC) is older than {check_days:g} day(s); "
                                       "record a new passing check, then upload again")
    return True, checked, until, f"qualified until {until:%Y-%m-%d %H:%M} UTC"


def _view(session: Session, inst: Instrument, check_days: float) -> InstrumentView:
    ok, last, until, text = qualification(session, inst, check_days=check_days)
    return InstrumentView(id=inst.id or 0, code=inst.code, kind=inst.kind, location=inst.location,
                          active=inst.active, qualified=ok, last_passing_check_at=last, qualified_until=until,
                          status_text=text)


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
    return InstrumentCheckView(id=c.id or 0, instrument=code, passed=c.passed, result=json.loads(c.result),
                               file_name=c.file_name, sha256=sha, checked_at=utc(c.checked_at) or c.checked_at,
                               checked_by=c.checked_by)


def record_instrument_check(engine: Engine, actor: Actor, *, instrument_code: str, data: bytes,
                            file_name: str = "") -> InstrumentCheckView:
    """Read a polystyrene film spectrum, run the check and keep file and result (also when unreadable)."""
    if not isinstance(data, (bytes, bytearray)):
        raise InvalidInput("the check file must be bytes", fields=[FieldProblem("file", "upload the spectrum file")])
    try:
        spectrum = evaluator.read_spectrum(bytes(data), file_name=file_name)
        passed, result = evaluator.check_polystyrene(spectrum)
    except BandgateError as exc:
        passed, result = False, {"passed": False, "error": exc.message, "checks": []}
    with UnitOfWork(engine) as uow:
        inst = sh.instrument(uow.session, instrument_code)
        stored = repo.store_file(uow.session, bytes(data))
        check = InstrumentCheck(instrument_id=inst.id, file_id=stored.id, file_name=(file_name or "")[:255],
                                passed=passed, result=canonical_json(result), checked_at=utc_now(),
                                checked_by=actor.user_id)
        repo.add(uow.session, check)
        sh.audit(uow.session, actor, "instrument_check.recorded", "instrument_check", check.id,
                 new={"instrument": inst.code, "passed": passed, "sha256": stored.sha256, "size": stored.size,
                      "file_name": check.file_name, "result": result})
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
