"""The demo's start-up cost: migrating and seeding a fresh SQLite demo database (`make demo`)."""

from __future__ import annotations

import itertools
import tempfile
from pathlib import Path

from service.bench import BenchCase

_counter = itertools.count()


def _folder() -> Path:
    return Path(tempfile.mkdtemp(prefix="bandgate-bench-demo-"))


def _migrate_only(folder: Path) -> None:
    from service.store.migrations import upgrade

    upgrade(f"sqlite:///{folder / f'migrate-{next(_counter)}.db'}")


def _migrate_and_seed(folder: Path) -> None:
    from service.config import Mode, Settings
    from service.services.demo import seed_demo
    from service.store.migrations import upgrade

    url = f"sqlite:///{folder / f'demo-{next(_counter)}.db'}"
    upgrade(url)
    seed_demo(Settings(database_url=url, mode=Mode.demo))


def _reuse_seeded(url: str) -> None:
    from service.config import Mode, Settings
    from service.services.demo import seed_demo

    seed_demo(Settings(database_url=url, mode=Mode.demo))


def _seeded_url() -> str:
    from service.config import Mode, Settings
    from service.services.demo import seed_demo
    from service.store.migrations import upgrade

    url = f"sqlite:///{_folder() / 'reuse.db'}"
    upgrade(url)
    seed_demo(Settings(database_url=url, mode=Mode.demo))
    return url


def cases() -> list[BenchCase]:
    return [
        BenchCase("migrate a fresh SQLite file to head", _migrate_only, setup=_folder, repeats=3),
        BenchCase("migrate + seed the whole demo scenario (fresh SQLite)", _migrate_and_seed, setup=_folder,
                  repeats=2, aim="`make demo` serving in under 60 s on a fresh clone (install excluded)"),
        BenchCase("second start: seed_demo on the seeded database", _reuse_seeded, setup=_seeded_url, repeats=5),
    ]
