"""Prepared statements (service.store.prepared) give what ``Connection.execute`` gives, on SQLite and
PostgreSQL: the same rows with the same types (datetimes, booleans, NULLs, bytes), new ids from
INSERT ... RETURNING, rows changed by UPDATE, SQLAlchemy's own exceptions; and they refuse the
statements they cannot run faithfully. Tables of the test's own, on real databases."""

from __future__ import annotations

from datetime import datetime, timezone

import pytest
from sqlalchemy import (
    Boolean, Column, DateTime, Integer, LargeBinary, MetaData, String, Table, bindparam, insert, select, text,
    update,
)
from sqlalchemy.exc import IntegrityError

from service.store.engine import make_engine
from service.store.prepared import Prepared

META = MetaData()
THINGS = Table(
    "prepared_things", META,
    Column("id", Integer, primary_key=True, autoincrement=True),
    Column("name", String(40), nullable=False, unique=True),
    Column("active", Boolean, nullable=False),
    Column("seen_at", DateTime, nullable=True),
    Column("blob", LargeBinary, nullable=True),
    Column("count", Integer, nullable=False, default=0),  # a Python-side default
)
INSERT = Prepared(insert(THINGS).returning(THINGS.c.id))
BY_NAME = (select(THINGS.c.id, THINGS.c.name, THINGS.c.active, THINGS.c.seen_at, THINGS.c.blob, THINGS.c.count)
           .where(THINGS.c.name == bindparam("name"), THINGS.c.active.is_(True)))
ACTIVE_FIRST = select(THINGS.c.name).order_by(THINGS.c.active.desc(), THINGS.c.id).limit(1)
RENAME = update(THINGS).where(THINGS.c.id == bindparam("thing")).values(name=bindparam("new_name"))


@pytest.fixture()
def engine(empty_db_url):  # type: ignore[no-untyped-def]
    engine = make_engine(empty_db_url)
    META.create_all(engine)
    yield engine
    engine.dispose()


def _row(**values):  # type: ignore[no-untyped-def]
    base = {"name": "a", "active": True, "seen_at": None, "blob": None, "count": 0}
    return {**base, **values}


def test_selects_give_the_same_rows_and_types_as_execute(engine) -> None:  # type: ignore[no-untyped-def]
    seen = datetime(2026, 12, 2, 9, 30, 15, 123456, tzinfo=timezone.utc)
    with engine.begin() as conn:
        first = INSERT.inserted_id(conn, _row(name="film", seen_at=seen, blob=b"\x00\x01bytes"))
        second = INSERT.inserted_id(conn, _row(name="idle", active=False))
        assert second == first + 1
        for params in ({"name": "film"}, {"name": "idle"}, {"name": "nobody"}):
            want = conn.execute(BY_NAME, params).first()
            got = Prepared(BY_NAME).first(conn, params)
            assert got == (tuple(want) if want is not None else None)
            if got is not None:
                assert [type(v) for v in got] == [type(v) for v in want]  # type: ignore[union-attr]
        got = Prepared(BY_NAME).first(conn, {"name": "film"})
        assert got is not None and got[2] is True and bytes(got[4]) == b"\x00\x01bytes"
        assert got[3].replace(tzinfo=timezone.utc) == seen  # microseconds kept (SQLite stores text)
        assert Prepared(ACTIVE_FIRST).rows(conn) == [tuple(r) for r in conn.execute(ACTIVE_FIRST)] == [("film",)]


def test_text_statements_and_updates(engine) -> None:  # type: ignore[no-untyped-def]
    with engine.begin() as conn:
        thing = INSERT.inserted_id(conn, _row(name="old"))
        assert Prepared(RENAME).run(conn, {"thing": thing, "new_name": "new"}) == 1
        assert Prepared(RENAME).run(conn, {"thing": thing + 99, "new_name": "none"}) == 0
        count = Prepared(text("SELECT COUNT(*) FROM prepared_things WHERE name = :n AND active = :yes"))
        assert count.first(conn, {"n": "new", "yes": True}) == (1,)


def test_a_database_error_is_raised_as_sqlalchemys_exception_and_the_transaction_rolls_back(engine) -> None:  # type: ignore[no-untyped-def]
    with engine.begin() as conn:
        INSERT.inserted_id(conn, _row(name="unique"))
    with pytest.raises(IntegrityError):
        with engine.begin() as conn:
            INSERT.inserted_id(conn, _row(name="twice"))
            INSERT.inserted_id(conn, _row(name="unique"))
    with engine.connect() as conn:
        names = [r[0] for r in conn.execute(select(THINGS.c.name).order_by(THINGS.c.id))]
    assert names == ["unique"]


def test_statements_it_cannot_run_faithfully_are_refused_when_first_compiled(engine) -> None:  # type: ignore[no-untyped-def]
    with engine.begin() as conn:
        with pytest.raises(ValueError, match="Python-side column defaults"):
            INSERT.inserted_id(conn, {"name": "no count", "active": True})  # `count` has a Python default
        expanding = Prepared(select(THINGS.c.id).where(THINGS.c.name.in_(bindparam("names", expanding=True))))
        with pytest.raises(ValueError, match="rendered at execution time"):
            expanding.rows(conn, {"names": ["a", "b"]})
