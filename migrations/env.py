"""Alembic environment: the URL comes from the Config (set by service.store.migrations) or the settings."""

from __future__ import annotations

from alembic import context

from service.store.engine import make_engine

config = context.config


def _url() -> str:
    url = config.get_main_option("sqlalchemy.url")
    if url:
        return url
    from service.config import get_settings

    return get_settings().database_url


def run_migrations_online() -> None:
    engine = make_engine(_url())
    with engine.connect() as connection:
        context.configure(
            connection=connection,
            target_metadata=None,
            render_as_batch=connection.dialect.name == "sqlite",
            transaction_per_migration=True,
        )
        with context.begin_transaction():
            context.run_migrations()
    engine.dispose()


if context.is_offline_mode():
    context.configure(url=_url(), literal_binds=True)
    with context.begin_transaction():
        context.run_migrations()
else:
    run_migrations_online()
