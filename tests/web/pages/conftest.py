"""Fixtures for page tests: a real app on a seeded SQLite file (a PostgreSQL one for one flow)."""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest

from pages_lab import seed_lab, seed_people
from pages_site import Site, needs_readers
from service.store.engine import make_engine
from service.store.migrations import upgrade


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
