"""House style: the pure core imports nothing from the web or the database (one-way imports)."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

SERVICE = Path(__file__).resolve().parents[1] / "service"
PURE_PACKAGES = ["spectra", "evaluation", "release", "security"]
FORBIDDEN = ("fastapi", "starlette", "sqlalchemy", "sqlmodel", "jinja2", "alembic", "uvicorn",
             "service.store", "service.web", "service.services", "service.cli")


def _imports(path: Path) -> list[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    names: list[str] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.extend(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.append(node.module)
    return names


@pytest.mark.parametrize("package", PURE_PACKAGES)
def test_pure_core_imports_nothing_from_web_or_database(package: str) -> None:
    offenders = []
    for path in sorted((SERVICE / package).rglob("*.py")):
        for name in _imports(path):
            if any(name == f or name.startswith(f + ".") for f in FORBIDDEN):
                offenders.append(f"{path.relative_to(SERVICE.parent)} imports {name}")
    assert not offenders, "\n".join(offenders)


def test_store_does_not_import_web_or_services() -> None:
    offenders = []
    for path in sorted((SERVICE / "store").rglob("*.py")):
        for name in _imports(path):
            if name.startswith(("service.web", "service.services", "service.cli", "fastapi")):
                offenders.append(f"{path.relative_to(SERVICE.parent)} imports {name}")
    assert not offenders, "\n".join(offenders)
