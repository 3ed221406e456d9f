"""Application start-up: building the app (the fixed cost every worker pays)."""

from __future__ import annotations

import tempfile
from pathlib import Path

from service.bench import BenchCase


def _setup() -> str:
    from service.store.migrations import upgrade

    url = f"sqlite:///{Path(tempfile.mkdtemp(prefix='bandgate-bench-')) / 'bench.db'}"
    upgrade(url)
    return url


def _build(url: str) -> None:
    from service.config import Settings
    from service.web.app import create_app

    create_app(Settings(database_url=url)).state.engine.dispose()


def cases() -> list[BenchCase]:
    return [BenchCase("create_app (migrated SQLite)", _build, setup=_setup, repeats=5)]
