"""Helpers for page tests: a real app over a seeded database, signed-in clients, CSRF tokens."""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlalchemy.engine import Engine

import records_spectra
from pages_lab import PASSWORD, PEOPLE
from service.config import Settings
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


