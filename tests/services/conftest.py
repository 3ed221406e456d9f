"""Fixtures for use-case tests.

``lab`` gives a migrated database (SQLite and PostgreSQL, like ``db_url``) holding people, a
qualified instrument and the toluene method (approved spec and references of three materials).
It is built once per back-end as a template and copied for each test (a file copy on SQLite,
``CREATE DATABASE ... TEMPLATE`` on PostgreSQL), so each test starts from the same fresh state.
"""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from sqlalchemy.engine import Engine

from service import services as uc
from service.release import Actor
from service.store.engine import make_engine
from service.store.migrations import upgrade
from records_factories import make_people, seed_toluene_catalogue
import records_spectra

PG_URL = os.environ.get("BANDGATE_TEST_POSTGRES_URL", "")


@pytest.fixture
def engine(db_url: str) -> Iterator[Engine]:
    eng = make_engine(db_url)
    yield eng
    eng.dispose()


@dataclass
class Lab:
    engine: Engine
    url: str
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


def seed_lab(engine: Engine) -> dict[str, Actor]:
    people = make_people(engine)
    seed_toluene_catalogue(engine, qa=people["qa"], tech=people["tech"])
    return people


def _pg(sql: str) -> None:
    import psycopg

    with psycopg.connect(PG_URL.replace("postgresql+psycopg://", "postgresql://"), autocommit=True) as conn:
        conn.execute(sql)


def _pg_url(name: str) -> str:
    return f"{PG_URL.rpartition('/')[0]}/{name}"


@pytest.fixture(scope="session")
def _lab_templates(tmp_path_factory: pytest.TempPathFactory) -> Iterator[dict[str, str]]:
    made: dict[str, str] = {}
    yield made
    if "postgres" in made:
        _pg(f'DROP DATABASE IF EXISTS "{made["postgres"]}" WITH (FORCE)')


def _template(kind: str, made: dict[str, str], tmp_path_factory: pytest.TempPathFactory) -> str:
    if kind in made:
        return made[kind]
    if kind == "sqlite":
        path = tmp_path_factory.mktemp("lab-template") / "lab.db"
        url = f"sqlite:///{path}"
    else:
        name = f"bandgate_lab_{uuid.uuid4().hex[:10]}"
        _pg(f'CREATE DATABASE "{name}"')
        made[kind] = name  # dropped at the end even if seeding fails
        url = _pg_url(name)
    upgrade(url)
    eng = make_engine(url)
    try:
        seed_lab(eng)
        if kind == "sqlite":
            with eng.connect() as conn:
                conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        eng.dispose()
    made[kind] = str(path) if kind == "sqlite" else made[kind]
    return made[kind]


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def lab(request: pytest.FixtureRequest, _lab_templates: dict[str, str],
        tmp_path_factory: pytest.TempPathFactory, tmp_path: Path) -> Iterator[Lab]:
    """A fresh copy of the seeded lab database for one test."""
    pytest.importorskip("service.spectra.readers", reason="needs the spectrum readers (branch spectra-io)")
    if not records_spectra.available():
        pytest.skip("shared data folder is absent (CI always has it)")
    if request.param == "postgres" and not PG_URL:
        if os.environ.get("BANDGATE_REQUIRE_POSTGRES") == "1":
            pytest.fail("BANDGATE_REQUIRE_POSTGRES=1 but BANDGATE_TEST_POSTGRES_URL is not set")
        pytest.skip("PostgreSQL not configured: set BANDGATE_TEST_POSTGRES_URL (as .ci/run does) to run this")
    template = _template(request.param, _lab_templates, tmp_path_factory)
    if request.param == "sqlite":
        target = tmp_path / "bandgate.db"
        shutil.copyfile(template, target)
        url, drop = f"sqlite:///{target}", None
    else:
        name = f"bandgate_t_{uuid.uuid4().hex[:12]}"
        _pg(f'CREATE DATABASE "{name}" TEMPLATE "{template}"')
        url, drop = _pg_url(name), name
    eng = make_engine(url)
    people = {key: uc.get_actor(eng, username) for key, username in
              (("tech", "tina.tech"), ("tech2", "tom.tech"), ("reviewer", "rita.review"), ("qa", "quinn.qa"))}
    try:
        yield Lab(engine=eng, url=url, people=people)
    finally:
        eng.dispose()
        if drop:
            _pg(f'DROP DATABASE IF EXISTS "{drop}" WITH (FORCE)')
