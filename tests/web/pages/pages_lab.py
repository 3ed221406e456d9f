"""A lab on a real, migrated database for page and browser tests, built with the real use cases.

People with passwords (technician, supervisor, quality), a qualified instrument (SYNTHETIC
polystyrene film check), toluene as the material with an approved specification and approved
real ATR references of toluene, heptanes and isopropanol (``../shared/data``, see
``tests/records_spectra.py`` for the source and licence).
"""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy.engine import Engine

import records_spectra
from records_factories import make_material
from service import services as uc
from service.services import security_accounts as accounts

PASSWORD = "bandgate-page-tests-2026"


@dataclass(frozen=True)
class Who:
    username: str
    printed_name: str
    roles: tuple[str, ...]


PEOPLE = {
    "tech": Who("tina.tech", "Tina Techniker", ("technician",)),
    "sup": Who("sam.super", "Sam Supervisor", ("supervisor",)),
    "qa": Who("quinn.qa", "Quinn Quality", ("quality",)),
}


def seed_people(engine: Engine) -> None:
    for who in PEOPLE.values():
        accounts.create_user(engine, username=who.username, printed_name=who.printed_name, roles=who.roles,
                             password=PASSWORD, must_change_password=False)


def seed_lab(engine: Engine) -> None:
    """Everything a technician needs to receive a toluene lot and test it."""
    seed_people(engine)
    qa = uc.get_actor(engine, PEOPLE["qa"].username)
    tech = uc.get_actor(engine, PEOPLE["tech"].username)
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


def passing_upload() -> bytes:
    return records_spectra.real_csv("toluene", noise=0.002, seed=7)


def failing_upload() -> bytes:
    """Heptanes delivered as toluene: a mix-up the identity test must catch."""
    return records_spectra.real_csv("heptanes", noise=0.002, seed=8)


WRONG_FILE = b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\nthis is a scanned delivery note, not a spectrum\n"
