"""Migration 0002 builds exactly the tables the code declares, and the database refuses edits of records."""

from __future__ import annotations

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from sqlalchemy import text
from sqlalchemy.exc import DBAPIError
from sqlmodel import SQLModel

import service.store.tables  # noqa: F401  (registers the tables)
from service.store.engine import make_engine
from service.store.tables import APPEND_ONLY_TABLES
from records_factories import make_material, make_people


def test_migrated_schema_matches_the_models(db_url: str) -> None:
    engine = make_engine(db_url)
    with engine.connect() as conn:
        diff = compare_metadata(MigrationContext.configure(conn, opts={"compare_type": True}), SQLModel.metadata)
    engine.dispose()
    ours = {t.name for t in SQLModel.metadata.sorted_tables}
    # Tables of other areas (schema_info, later migrations' tables) are not in our metadata, and the
    # security migration (0003) adds credential columns to users: its own test checks those.
    from service.store.security import SECURITY_USER_COLUMNS

    def other_area(d: tuple) -> bool:  # type: ignore[type-arg]
        if d[0] == "remove_table":
            return d[1].name not in ours
        if d[0] == "remove_index":
            return d[1].table.name not in ours
        if d[0] == "remove_column":
            return d[2] not in ours or (d[2] == "users" and d[3].name in SECURITY_USER_COLUMNS)
        return False

    unexpected = [d for d in diff if not other_area(d)]
    assert unexpected == []


@pytest.mark.parametrize("table", ["audit_events", "signatures", "measurements"])
def test_update_and_delete_of_append_only_rows_are_refused_by_the_database(db_url: str, table: str) -> None:
    engine = make_engine(db_url)
    people = make_people(engine)
    make_material(engine, people["qa"])
    # every use case wrote audit events; add one signature row to have something to attack
    with engine.begin() as conn:
        if table == "signatures":
            conn.execute(text("INSERT INTO signatures (record_type, record_id, meaning, reason, user_id, username, "
                              "printed_name, signed_at, digest) VALUES ('lot', 1, 'released', '', :u, 'x', 'X', "
                              "CURRENT_TIMESTAMP, :d)"), {"u": people["qa"].user_id, "d": "0" * 64})
    with engine.connect() as conn:
        count = conn.execute(text(f"SELECT COUNT(*) FROM {table}")).scalar_one()
    if count == 0:
        _add_measurement_row(engine, people)
    for sql in (f"UPDATE {table} SET id = id", f"DELETE FROM {table}"):
        with pytest.raises(DBAPIError, match="append-only"):
            with engine.begin() as conn:
                conn.execute(text(sql))
    if engine.dialect.name == "postgresql":
        with pytest.raises(DBAPIError, match="append-only"):
            with engine.begin() as conn:
                conn.execute(text(f"TRUNCATE {table} CASCADE"))
    with engine.connect() as conn:
        assert conn.execute(text(f"SELECT COUNT(*) FROM {table}")).scalar_one() >= 1
    engine.dispose()


def _add_measurement_row(engine, people) -> None:  # type: ignore[no-untyped-def]
    from service import services as uc
    from records_factories import receive

    uc.register_instrument(engine, people["qa"], code="FTIR-1", kind="FT-IR with diamond ATR")
    lot = receive(engine, people["tech"])
    with pytest.raises(uc.MeasurementRefused):  # instrument not qualified: the upload is still kept
        uc.record_measurement(engine, people["tech"], lot_code=lot.code, container=1, instrument_code="FTIR-1",
                              data=b"not a spectrum", file_name="x.csv")


def test_every_append_only_table_has_its_triggers(db_url: str) -> None:
    engine = make_engine(db_url)
    with engine.connect() as conn:
        if engine.dialect.name == "sqlite":
            names = set(conn.execute(text("SELECT name FROM sqlite_master WHERE type='trigger'")).scalars())
            expected = {f"{t}_no_{v}" for t in APPEND_ONLY_TABLES for v in ("update", "delete")}
        else:
            names = set(conn.execute(text("SELECT tgname FROM pg_trigger WHERE NOT tgisinternal")).scalars())
            expected = {f"{t}_{s}" for t in APPEND_ONLY_TABLES for s in ("append_only", "no_truncate")}
    engine.dispose()
    assert expected <= names


def test_sqlite_runs_in_wal_mode_with_full_sync(sqlite_url: str) -> None:
    from service.store.migrations import upgrade

    upgrade(sqlite_url)
    engine = make_engine(sqlite_url)
    with engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar_one() == "wal"
        assert conn.exec_driver_sql("PRAGMA synchronous").scalar_one() == 2  # FULL
    engine.dispose()


def test_migration_0005_adds_and_removes_the_check_measurement_time(db_url: str) -> None:
    """0005 adds instrument_checks.measured_at (old rows keep NULL); its downgrade drops it and keeps the
    append-only triggers of the table on both back-ends."""
    from sqlalchemy import inspect as sa_inspect

    from service.store.migrations import downgrade, upgrade

    engine = make_engine(db_url)
    people = make_people(engine)
    from service import services as uc
    import records_spectra

    uc.register_instrument(engine, people["qa"], code="FTIR-1", kind="FT-IR")
    uc.record_instrument_check(engine, people["tech"], instrument_code="FTIR-1",
                               data=records_spectra.synthetic_polystyrene_csv(), file_name="ps.csv")
    engine.dispose()
    downgrade(db_url, "0004")
    engine = make_engine(db_url)
    assert "measured_at" not in {c["name"] for c in sa_inspect(engine).get_columns("instrument_checks")}
    with pytest.raises(DBAPIError, match="append-only"):
        with engine.begin() as conn:
            conn.execute(text("DELETE FROM instrument_checks"))
    engine.dispose()
    upgrade(db_url)
    engine = make_engine(db_url)
    with engine.connect() as conn:
        assert conn.execute(text("SELECT COUNT(*), COUNT(measured_at) FROM instrument_checks")).one() == (1, 0)
    with pytest.raises(DBAPIError, match="append-only"):
        with engine.begin() as conn:
            conn.execute(text("UPDATE instrument_checks SET passed = passed"))
    engine.dispose()
