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


def seed_toluene_catalogue(engine: Engine, *, qa: Actor, tech: Actor) -> None:
    """A qualified instrument FTIR-1, materials TOL-01/HEP-01/IPA-01 with approved real ATR references
    (PlotFTIR five-material set, read in place from ../shared/data) and an approved toluene specification."""
    import records_spectra

    uc.register_instrument(engine, qa, code="FTIR-1", kind="FT-IR, diamond ATR", location="QC lab 2")
    check = uc.record_instrument_check(engine, tech, instrument_code="FTIR-1",
                                       data=records_spectra.synthetic_polystyrene_csv(), file_name="ps-film.csv")
    assert check.passed, check.result
    make_material(engine, qa, code="TOL-01", name="Toluene", supplier="Northwind Solvents")
    for code, name, column in (("HEP-01", "Heptanes", "heptanes"), ("IPA-01", "Isopropanol", "isopropanol"),
                               ("TOL-01", "Toluene", "toluene")):
        if code != "TOL-01":
            uc.create_material(engine, qa, code=code, name=name)
        ref = uc.add_reference(engine, qa, material_code=code, preparation="atr-diamond",
                               data=records_spectra.real_csv(column), file_name=f"{column}-reference.csv",
                               instrument_code="FTIR-1", conditions="4 cm-1, 32 scans")
        uc.approve_reference(engine, qa, reference_id=ref.id, reason="reference for identity testing")
    spec = uc.create_spec_draft(engine, qa, material_code="TOL-01", document=records_spectra.TOLUENE_SPEC)
    uc.approve_spec_version(engine, qa, spec_version_id=spec.id, reason="first version")
