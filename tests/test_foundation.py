"""Foundation: settings, migrations on both back-ends, app health, error mapping, CLI."""

from __future__ import annotations

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import inspect

from service.config import DEFAULT_SECRET, Mode, Settings, SettingsError, get_settings
from service.store.engine import make_engine
from service.store.migrations import DatabaseNotMigrated, current_revision, downgrade, head_revision, upgrade
from service.web.app import create_app


def test_migrations_upgrade_to_head_and_downgrade_to_base(empty_db_url: str) -> None:
    upgrade(empty_db_url)
    engine = make_engine(empty_db_url)
    assert current_revision(engine) == head_revision(empty_db_url)
    assert "schema_info" in inspect(engine).get_table_names()
    engine.dispose()
    downgrade(empty_db_url, "base")
    engine = make_engine(empty_db_url)
    assert current_revision(engine) is None
    assert "schema_info" not in inspect(engine).get_table_names()
    engine.dispose()
    upgrade(empty_db_url)  # and up again: the downgrade left nothing behind


def test_app_refuses_an_unmigrated_database(sqlite_url: str) -> None:
    with pytest.raises(DatabaseNotMigrated, match="bandgate migrate"):
        create_app(Settings(database_url=sqlite_url))


def test_healthz_and_readyz(db_url: str) -> None:
    client = TestClient(create_app(Settings(database_url=db_url)))
    assert client.get("/healthz").json()["status"] == "ok"
    ready = client.get("/readyz")
    assert ready.status_code == 200 and ready.json()["migration"] == head_revision(db_url)


def test_unknown_api_path_is_problem_json_and_page_is_html(db_url: str) -> None:
    client = TestClient(create_app(Settings(database_url=db_url)))
    r = client.get("/api/v1/nothing-here")
    assert r.status_code == 404
    assert r.headers["content-type"].startswith("application/problem+json")
    body = r.json()
    assert body["status"] == 404 and body["type"].endswith("/not-found") and "Traceback" not in r.text
    page = client.get("/nothing-here")
    assert page.status_code == 404 and page.headers["content-type"].startswith("text/html")


def test_production_refuses_the_default_secret() -> None:
    with pytest.raises(ValueError, match="BANDGATE_SECRET_KEY"):
        Settings(mode=Mode.production, secret_key=DEFAULT_SECRET)
    Settings(mode=Mode.production, secret_key="x" * 40)  # a real secret is fine


def test_get_settings_turns_a_bad_value_into_a_named_error(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("BANDGATE_MODE", "production")
    get_settings.cache_clear()
    try:
        with pytest.raises(SettingsError, match="BANDGATE_SECRET_KEY"):
            get_settings()
    finally:
        get_settings.cache_clear()


def test_settings_read_the_environment(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("BANDGATE_MAX_UPLOAD_BYTES", "2048")
    monkeypatch.setenv("BANDGATE_DATABASE_URL", "sqlite:///elsewhere.db")
    s = Settings()
    assert s.max_upload_bytes == 2048 and s.database_url == "sqlite:///elsewhere.db"
