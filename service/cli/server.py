"""serve, demo, migrate, version."""

from __future__ import annotations

import argparse
import os
import sys

from service import __version__
from service.config import Mode, Settings, get_settings

DEMO_DATABASE_URL = "sqlite:///./var/demo.db"


def _add_bind(p: argparse.ArgumentParser) -> None:
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1)")
    p.add_argument("--port", type=int, default=8000, help="port to listen on (default 8000)")


def register(subparsers: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    p = subparsers.add_parser("serve", help="serve the web application", description="Serve the web application and API.")
    _add_bind(p)
    p.add_argument("--workers", type=int, default=1, help="worker processes (default 1)")
    p.set_defaults(handler=_serve)

    p = subparsers.add_parser(
        "demo",
        help="migrate and seed the demo database, then serve it",
        description="Migrate the demo SQLite database (./var/demo.db unless BANDGATE_DATABASE_URL is set), "
        "seed the synthetic demo data and serve it. Refuses a database that is not the demo one.",
    )
    _add_bind(p)
    p.set_defaults(handler=_demo)

    p = subparsers.add_parser("migrate", help="upgrade the database to the newest schema",
                              description="Upgrade the database named by BANDGATE_DATABASE_URL to the head migration.")
    p.set_defaults(handler=_migrate)

    p = subparsers.add_parser("version", help="print the software version", description="Print the software version.")
    p.set_defaults(handler=lambda _args: print(f"bandgate {__version__}") or 0)


def _ensure_sqlite_dir(url: str) -> None:
    if url.startswith("sqlite:///"):
        path = url[len("sqlite:///"):]
        if path and path != ":memory:":
            os.makedirs(os.path.dirname(os.path.abspath(path)), exist_ok=True)


def _migrate(_args: argparse.Namespace) -> int:
    from service.store.migrations import head_revision, upgrade

    settings = get_settings()
    _ensure_sqlite_dir(settings.database_url)
    upgrade(settings.database_url)
    print(f"database at migration {head_revision(settings.database_url)}")
    return 0


def _run_server(settings: Settings, host: str, port: int, workers: int = 1) -> int:
    import uvicorn

    from service.web.app import create_app
    from service.web.asgi import ready_to_serve

    if workers <= 1:
        app = ready_to_serve(create_app(settings))  # refuses to start on an unmigrated database
        uvicorn.run(app, host=host, port=port, log_level="warning", access_log=False)
    else:
        create_app(settings)  # fail fast in the parent with a clear message
        uvicorn.run("service.web.asgi:app", factory=True, host=host, port=port, workers=workers,
                    log_level="warning", access_log=False)
    return 0


def _serve(args: argparse.Namespace) -> int:
    settings = get_settings()
    print(f"Bandgate {__version__} serving on http://{args.host}:{args.port}/", flush=True)
    return _run_server(settings, args.host, args.port, args.workers)


def _demo(args: argparse.Namespace) -> int:
    from service.store.migrations import upgrade

    url = os.environ.get("BANDGATE_DATABASE_URL", DEMO_DATABASE_URL)
    settings = Settings(database_url=url, mode=Mode.demo)
    _ensure_sqlite_dir(url)
    _check_demo_database(settings)  # before migrating: never touch a database that is not the demo one
    upgrade(url)
    logins = _seed_demo(settings)
    print(f"Bandgate {__version__} demo on http://{args.host}:{args.port}/", flush=True)
    print("Synthetic demo data; a computed result is advice to the quality unit, not a release.", flush=True)
    for user, password, role in logins:
        print(f"  login {user:<12} password {password:<24} role {role}", flush=True)
    sys.stdout.flush()
    return _run_server(settings, args.host, args.port)


def _check_demo_database(settings: Settings) -> None:
    try:
        from service.services.demo import check_demo_database
    except ImportError:
        return
    check_demo_database(settings)


def _seed_demo(settings: Settings) -> list[tuple[str, str, str]]:
    """Seed the demo scenario if the seeding module exists; returns (user, password, role) rows."""
    try:
        from service.services.demo import seed_demo  # type: ignore[attr-defined]
    except ImportError:
        return []
    return list(seed_demo(settings))
