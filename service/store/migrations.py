"""Run Alembic from code: upgrade, downgrade, and compare the database with head."""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy.engine import Engine

from service.store.engine import _normalise_url

MIGRATIONS_DIR = Path(__file__).resolve().parents[2] / "migrations"


class DatabaseNotMigrated(RuntimeError):
    """The database schema is behind the code; the message says which command fixes it."""


def alembic_config(url: str) -> Config:
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    cfg.set_main_option("sqlalchemy.url", _normalise_url(url).replace("%", "%%"))
    return cfg


def upgrade(url: str, revision: str = "head") -> None:
    command.upgrade(alembic_config(url), revision)


def downgrade(url: str, revision: str = "base") -> None:
    command.downgrade(alembic_config(url), revision)


def head_revision(url: str) -> str | None:
    return ScriptDirectory.from_config(alembic_config(url)).get_current_head()


def current_revision(engine: Engine) -> str | None:
    with engine.connect() as conn:
        return MigrationContext.configure(conn).get_current_revision()


def ensure_at_head(engine: Engine, url: str) -> None:
    current, head = current_revision(engine), head_revision(url)
    if current != head:
        raise DatabaseNotMigrated(
            f"the database is at migration {current or 'none'} but this version of Bandgate needs {head}; "
            "run `bandgate migrate` (with the same BANDGATE_DATABASE_URL) and start again"
        )
