"""Read one recorded instrument check with its original file (for the check's result page and plot)."""

from __future__ import annotations

from sqlalchemy.engine import Engine

from service.errors import NotFound
from service.store import repositories as repo
from service.store.tables import InstrumentCheck, Instrument
from service.store.unit_of_work import UnitOfWork
from service.services.instruments import _check_view
from service.services.views import InstrumentCheckView


def instrument_check_file(engine: Engine, check_id: int) -> tuple[InstrumentCheckView, bytes]:
    """The check's record and the bytes of the spectrum file exactly as uploaded."""
    with UnitOfWork(engine, write=False) as uow:
        s = uow.session
        check = s.get(InstrumentCheck, check_id)
        if check is None:
            raise NotFound(f"no instrument check with id {check_id}")
        inst = s.get(Instrument, check.instrument_id)
        stored = repo.file_by_id(s, check.file_id)
        if inst is None or stored is None:
            raise NotFound(f"instrument check {check_id} has lost its instrument or file; run `bandgate audit verify`")
        return _check_view(check, inst.code, stored.sha256), bytes(stored.content)
