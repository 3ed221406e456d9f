"""The demo marker: a ``schema_info`` row that makes a database "the demo one".

`bandgate demo` seeds synthetic records. It must never do so into a real installation, so it seeds
only a database that holds no records yet (and then marks it) or one that carries this marker.
"""

from __future__ import annotations

from datetime import datetime, timezone

from sqlalchemy import inspect, text
from sqlalchemy.engine import Engine

MARKER_KEY = "demo"
SEEDING = "seeding"
SEEDED = "seeded"

# Tables that exist in every installation and do not make it "hold records".
_FRAMEWORK_TABLES = frozenset({"alembic_version", "schema_info"})


def demo_marker(engine: Engine) -> str | None:
    """The marker's value (``seeding`` or ``seeded``), or None when the database is not marked
    (or not even migrated)."""
    if "schema_info" not in inspect(engine).get_table_names():
        return None
    with engine.connect() as conn:
        row = conn.execute(text("SELECT value FROM schema_info WHERE key = :k"), {"k": MARKER_KEY}).first()
    return None if row is None else str(row[0])


def tables_with_rows(engine: Engine, *, ignore: frozenset[str] = frozenset()) -> list[str]:
    """Names of the tables that hold at least one row (framework tables and ``ignore`` left out)."""
    names = sorted(set(inspect(engine).get_table_names()) - _FRAMEWORK_TABLES - ignore)
    found = []
    with engine.connect() as conn:
        for name in names:
            quoted = engine.dialect.identifier_preparer.quote(name)
            if conn.execute(text(f"SELECT 1 FROM {quoted} LIMIT 1")).first() is not None:
                found.append(name)
    return found


def set_demo_marker(engine: Engine, value: str) -> None:
    """Write (or move) the marker in its own transaction."""
    with engine.begin() as conn:
        done = conn.execute(text("UPDATE schema_info SET value = :v, updated_at = :t WHERE key = :k"),
                            {"v": value, "t": datetime.now(timezone.utc), "k": MARKER_KEY})
        if done.rowcount == 0:
            conn.execute(text("INSERT INTO schema_info (key, value, updated_at) VALUES (:k, :v, :t)"),
                         {"k": MARKER_KEY, "v": value, "t": datetime.now(timezone.utc)})
