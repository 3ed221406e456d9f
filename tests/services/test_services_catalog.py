"""Catalogue use cases without spectra: people, materials, suppliers, instruments, lots and plans."""

from __future__ import annotations

from datetime import date

import pytest

from service import services as uc
from service.errors import Conflict, InvalidInput, NotFound
from service.store.audit import SYSTEM_ACTOR
from records_factories import make_material, make_people, receive


def test_users_are_unique_and_ids_never_reused(engine) -> None:  # type: ignore[no-untyped-def]
    a = uc.create_user(engine, SYSTEM_ACTOR, username="Ana.Lyst", printed_name="Ana Lyst", roles=["technician"])
    assert a.username == "ana.lyst" and a.roles == ("technician",) and a.active
    with pytest.raises(Conflict):
        uc.create_user(engine, SYSTEM_ACTOR, username="ana.lyst", printed_name="Other")
    with pytest.raises(InvalidInput):
        uc.create_user(engine, SYSTEM_ACTOR, username="x", printed_name="Too short")
    actor = uc.get_actor(engine, "ana.lyst")
    assert actor.user_id == a.id and actor.printed_name == "Ana Lyst" and "technician" in actor.roles
    with pytest.raises(NotFound):
        uc.get_actor(engine, "nobody")


def test_receive_lot_computes_and_stores_the_plan(engine) -> None:  # type: ignore[no-untyped-def]
    people = make_people(engine)
    make_material(engine, people["qa"])
    lot = receive(engine, people["tech"], containers=10)
    assert lot.state == "quarantine" and lot.state_label == "received, in quarantine"
    assert lot.plan["kind"] == "every_container" and lot.plan["to_test"] == 10
    assert lot.plan["n"] == 5 and lot.plan["p"] == 2 and lot.plan["r"] == 5  # WHO TRS 929 Annex 4, N = 10
    assert [c.number for c in lot.containers] == list(range(1, 11)) and all(c.selected for c in lot.containers)
    second = receive(engine, people["tech"])
    assert second.code != lot.code
    page, total = uc.list_lots(engine, state="quarantine")
    assert total == 2 and {p.code for p in page} == {lot.code, second.code}
    with pytest.raises(InvalidInput):
        uc.list_lots(engine, state="limbo")
    events = uc.audit_events(engine, record_type="lot", record_id=str(lot.id))
    assert events[0]["action"] == "lot.received" and events[0]["new_values"]["plan"]["to_test"] == 10


BAD_LOTS = [
    ({"containers": 0}, "containers"), ({"containers": "3"}, "containers"), ({"supplier_lot": " "}, "supplier_lot"),
    ({"received_on": "yesterday"}, "received_on"), ({"retest_on": date(2020, 1, 1)}, "retest_on"),
]


def test_receive_lot_bad_input_names_the_field_and_writes_nothing(engine) -> None:  # type: ignore[no-untyped-def]
    people = make_people(engine)
    make_material(engine, people["qa"])
    before = len(uc.audit_events(engine, limit=1000))
    for overrides, field in BAD_LOTS:
        with pytest.raises(InvalidInput) as info:
            receive(engine, people["tech"], **overrides)
        assert info.value.fields[0].path == field, overrides
    assert len(uc.audit_events(engine, limit=1000)) == before
    assert uc.list_lots(engine)[1] == 0


def test_unknown_material_or_supplier(engine) -> None:  # type: ignore[no-untyped-def]
    people = make_people(engine)
    make_material(engine, people["qa"])
    with pytest.raises(NotFound, match="material"):
        receive(engine, people["tech"], material_code="NOPE")
    with pytest.raises(NotFound, match="supplier"):
        receive(engine, people["tech"], supplier_name="Nobody")


def test_measurement_on_unqualified_instrument_is_kept_as_refused(engine) -> None:  # type: ignore[no-untyped-def]
    people = make_people(engine)
    make_material(engine, people["qa"])
    inst = uc.register_instrument(engine, people["qa"], code="FTIR-9", kind="FT-IR")
    assert not inst.qualified and "no passing polystyrene check" in inst.status_text
    lot = receive(engine, people["tech"])
    with pytest.raises(uc.MeasurementRefused, match="run the polystyrene check on FTIR-9 and upload it, then measure again") as info:
        uc.record_measurement(engine, people["tech"], lot_code=lot.code, container=1, instrument_code="FTIR-9",
                              data=b"anything", file_name="a.csv")
    kept = info.value.measurement
    assert kept.status == "refused" and kept.size == 8
    assert uc.get_lot(engine, lot.code).measurements[0].reason == kept.reason
    assert uc.verify_audit(engine).ok
