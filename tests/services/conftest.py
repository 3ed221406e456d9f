"""Fixtures for use-case tests: a migrated engine with people, a qualified instrument and an approved toluene method."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import pytest
from sqlalchemy.engine import Engine

from service import services as uc
from service.release import Actor
from service.store.engine import make_engine
from records_factories import make_material, make_people
import records_spectra


@pytest.fixture
def engine(db_url: str) -> Iterator[Engine]:
    eng = make_engine(db_url)
    yield eng
    eng.dispose()


@dataclass
class Lab:
    engine: Engine
    people: dict[str, Actor]
    instrument: str = "FTIR-1"

    @property
    def tech(self) -> Actor:
        return self.people["tech"]

    @property
    def reviewer(self) -> Actor:
        return self.people["reviewer"]

    @property
    def qa(self) -> Actor:
        return self.people["qa"]


@pytest.fixture
def lab(engine: Engine) -> Lab:
    """People, a qualified instrument and the toluene method (approved spec + references of three materials)."""
    pytest.importorskip("service.spectra.readers", reason="needs the spectrum readers (branch spectra-io)")
    if not records_spectra.available():
        pytest.skip("shared data folder is absent (CI always has it)")
    people = make_people(engine)
    qa = people["qa"]
    uc.register_instrument(engine, qa, code="FTIR-1", kind="FT-IR, diamond ATR", location="QC lab 2")
    check = uc.record_instrument_check(engine, people["tech"], instrument_code="FTIR-1",
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
    return Lab(engine=engine, people=people)
