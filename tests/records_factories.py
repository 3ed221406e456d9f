"""Plain factories for record tests: people, catalogue entries and lots on a real, migrated database."""

from __future__ import annotations

from datetime import date
from typing import Any

from sqlalchemy.engine import Engine

from service import services as uc
from service.release import Actor
from service.store.audit import SYSTEM_ACTOR


def make_user(engine: Engine, username: str, *, roles: tuple[str, ...] = ("technician",),
              printed_name: str | None = None) -> Actor:
    uc.create_user(engine, SYSTEM_ACTOR, username=username, printed_name=printed_name or username.title(),
                   roles=roles)
    return uc.get_actor(engine, username)


def make_people(engine: Engine) -> dict[str, Actor]:
    return {
        "tech": make_user(engine, "tina.tech", roles=("technician",), printed_name="Tina Tech"),
        "tech2": make_user(engine, "tom.tech", roles=("technician",), printed_name="Tom Tech"),
        "reviewer": make_user(engine, "rita.review", roles=("reviewer",), printed_name="Rita Review"),
        "qa": make_user(engine, "quinn.qa", roles=("quality",), printed_name="Quinn QA"),
    }


def make_material(engine: Engine, actor: Actor, *, code: str = "EXC-104", name: str = "Lactose monohydrate",
                  supplier: str = "Northwind Excipients", reduced_plan: bool = False) -> None:
    uc.create_material(engine, actor, code=code, name=name)
    if supplier not in {s.name for s in uc.list_suppliers(engine)}:
        uc.create_supplier(engine, actor, name=supplier)
    uc.approve_supplier(engine, actor, material_code=code, supplier_name=supplier, reduced_plan=reduced_plan)


def receive(engine: Engine, actor: Actor, **overrides: Any):  # type: ignore[no-untyped-def]
    args: dict[str, Any] = dict(material_code="EXC-104", supplier_name="Northwind Excipients",
                                supplier_lot="NW-7781", containers=3, received_on=date(2026, 12, 1),
                                retest_on=date(2028, 12, 1))
    args.update(overrides)
    return uc.receive_lot(engine, actor, **args)
