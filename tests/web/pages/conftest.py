"""Fixtures for page tests: a real app on a migrated SQLite (and PostgreSQL) database, signed-in clients."""

from __future__ import annotations

import re
import shutil
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlalchemy.engine import Engine

import records_spectra
from pages_lab import PASSWORD, PEOPLE, seed_lab, seed_people
from service.config import Settings
from service.store.engine import make_engine
from service.store.migrations import upgrade
from service.web.app import create_app

SECRET = "page-tests-secret-key-0123456789-abcdefghijklmnop"
CSRF = re.compile(r'name="csrf_token" value="([^"]+)"')


def needs_readers() -> None:
    pytest.importorskip("service.spectra.readers", reason="needs the spectrum readers (branch spectra-io)")
    if not records_spectra.available():
        pytest.skip("shared data folder is absent (CI always has it)")


@dataclass
class Site:
    db_url: str
    engine: Engine
    tmp: Path

    def client(self, who: str | None = None) -> TestClient:
        app = create_app(Settings(database_url=self.db_url, secret_key=SECRET, data_dir=self.tmp / "data"))
        c = TestClient(app, base_url="http://testserver", follow_redirects=False)
        if who is not None:
            r = c.post("/login", data={"username": PEOPLE[who].username, "password": PASSWORD, "next": "/"})
            assert r.status_code == 303, r.text[:500]
        return c


def csrf(client: TestClient, path: str) -> tuple[str, str]:
    """The page's HTML and the CSRF token in its forms."""
    r = client.get(path)
    assert r.status_code == 200, (path, r.status_code, r.text[:800])
    m = CSRF.search(r.text)
    assert m, f"no csrf token on {path}"
    return r.text, m.group(1)


def _seeded_copy(template: Path, tmp_path: Path) -> str:
    """A private copy of a seeded SQLite file (seeding once per session keeps the page tests quick)."""
    target = tmp_path / "bandgate.db"
    shutil.copyfile(template, target)
    return f"sqlite:///{target}"


def _template(tmp_path_factory: pytest.TempPathFactory, name: str, seed) -> Path:  # type: ignore[no-untyped-def]
    path = tmp_path_factory.mktemp(name) / "template.db"
    url = f"sqlite:///{path}"
    upgrade(url)
    engine = make_engine(url)
    seed(engine)
    engine.dispose()  # the last connection closes: the WAL is checkpointed into the file
    return path


@pytest.fixture(scope="session")
def _people_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return _template(tmp_path_factory, "people", seed_people)


@pytest.fixture(scope="session")
def _lab_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    needs_readers()
    return _template(tmp_path_factory, "lab", seed_lab)


def _site(db_url: str, tmp_path: Path) -> Iterator[Site]:
    engine = make_engine(db_url)
    yield Site(db_url=db_url, engine=engine, tmp=tmp_path)
    engine.dispose()


@pytest.fixture
def people_site(_people_template: Path, tmp_path: Path) -> Iterator[Site]:
    """People with passwords (technician, supervisor, quality) on a migrated SQLite file."""
    yield from _site(_seeded_copy(_people_template, tmp_path), tmp_path)


@pytest.fixture
def lab_site(_lab_template: Path, tmp_path: Path) -> Iterator[Site]:
    """The whole lab (see pages_lab) on a migrated SQLite file."""
    yield from _site(_seeded_copy(_lab_template, tmp_path), tmp_path)


@pytest.fixture
def lab_site_pg(postgres_url: str, tmp_path: Path) -> Iterator[Site]:
    """The whole lab on a fresh PostgreSQL database (BANDGATE_TEST_POSTGRES_URL)."""
    needs_readers()
    upgrade(postgres_url)
    engine = make_engine(postgres_url)
    seed_lab(engine)
    engine.dispose()
    yield from _site(postgres_url, tmp_path)
