"""The `bandgate` command.

Each module in this package that defines ``register(subparsers)`` adds its subcommands; adding a
command is adding a module. Commands return an exit code; typed errors become one line on
stderr and exit code 2, never a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
from collections.abc import Sequence

from service import __version__
from service.config import SettingsError
from service.errors import BandgateError
from service.store.migrations import DatabaseNotMigrated


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="bandgate",
        description="Identity testing of incoming raw-material lots by mid-IR spectroscopy.",
    )
    parser.add_argument("--version", action="version", version=f"bandgate {__version__}")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND")
    for info in sorted(pkgutil.iter_modules(__path__), key=lambda m: m.name):
        if info.name.startswith("_"):
            continue
        module = importlib.import_module(f"{__name__}.{info.name}")
        register = getattr(module, "register", None)
        if register is not None:
            register(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "handler", None):
        parser.print_help()
        return 2
    try:
        return int(args.handler(args) or 0)
    except (BandgateError, DatabaseNotMigrated, SettingsError) as exc:
        print(f"bandgate: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
