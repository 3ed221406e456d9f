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
from records_factories import seed_toluene_catalogue
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
    seed_toluene_catalogue(engine, qa=qa, tech=tech)


def passing_upload() -> bytes:
    return records_spectra.real_csv("toluene", noise=0.002, seed=7)


def failing_upload() -> bytes:
    """Heptanes delivered as toluene: a mix-up the identity test must catch."""
    return records_spectra.real_csv("heptanes", noise=0.002, seed=8)


WRONG_FILE = b"%PDF-1.4\n%\xe2\xe3\xcf\xd3\nthis is a scanned delivery note, not a spectrum\n"
