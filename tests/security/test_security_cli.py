"""`bandgate user ...` and `bandgate token ...` on a real migrated database."""

from __future__ import annotations

import io
import sys

import pytest
from sqlalchemy import text

from service.cli import main
from service.config import get_settings
from service.security.tokens import digest
from service.store.engine import make_engine


@pytest.fixture
def cli(db_url: str, monkeypatch: pytest.MonkeyPatch):  # type: ignore[no-untyped-def]
    monkeypatch.setenv("BANDGATE_DATABASE_URL", db_url)
    get_settings.cache_clear()

    def run(*args: str, stdin: str = "") -> int:
        monkeypatch.setattr(sys, "stdin", io.StringIO(stdin))
        return main(list(args))

    yield run
    get_settings.cache_clear()


def test_first_administrator_and_people_from_the_command_line(cli, db_url: str, capsys) -> None:  # type: ignore[no-untyped-def]
    assert cli("user", "create", "--username", "ada.admin", "--name", "Ada Admin", "--role", "administrator",
               "--password-stdin", "--own-password", stdin="copper kettle morning tide\n") == 0
    assert cli("user", "create", "--username", "tess.tech", "--name", "Tess Tech", "--role", "technician,reviewer") == 0
    out = capsys.readouterr().out
    temporary = out.strip().splitlines()[-1]
    assert len(temporary) >= 12 and " " not in temporary
    assert cli("user", "list") == 0
    listing = capsys.readouterr().out
    assert "ada.admin" in listing and "active" in listing
    assert "supervisor,technician" in listing and "must change password" in listing
    # Bad input: one line on stderr, exit 2, nothing written.
    assert cli("user", "create", "--username", "x", "--name", "Xavier X", "--role", "wizard", "--password-stdin",
               stdin="copper kettle morning tide\n") == 2
    err = capsys.readouterr().err
    assert "unknown role" in err and "username" in err  # every wrong field named at once
    assert cli("user", "create", "--username", "bob.b", "--name", "Bob B", "--role", "quality", "--password-stdin",
               stdin="password1234\n") == 2
    assert "commonly used" in capsys.readouterr().err
    assert cli("user", "disable", "tess.tech", "--reason", "left") == 0
    assert cli("user", "reset-password", "tess.tech", "--reason", "returned") == 0
    assert cli("user", "enable", "tess.tech", "--reason", "returned") == 0
    assert cli("user", "unlock", "nobody.here", "--reason", "x") == 2
    engine = make_engine(db_url)
    with engine.connect() as conn:
        names = [r[0] for r in conn.execute(text("SELECT username FROM users ORDER BY id"))]
        actions = [r[0] for r in conn.execute(text("SELECT action FROM audit_events ORDER BY seq"))]
    engine.dispose()
    assert names == ["ada.admin", "tess.tech"]
    assert actions == ["user.created", "user.created", "user.disabled", "user.password-reset", "user.enabled"]


def test_token_create_prints_the_token_alone_on_its_last_line_once(cli, db_url: str, capsys) -> None:  # type: ignore[no-untyped-def]
    assert cli("token", "create", "--client", "lims-1", "--scope", "read,submit") == 0
    token = capsys.readouterr().out.rstrip("\n").splitlines()[-1]
    assert token.startswith("bgt_") and " " not in token
    engine = make_engine(db_url)
    with engine.connect() as conn:
        stored = conn.execute(text("SELECT token_hash, scopes FROM api_tokens")).one()
    engine.dispose()
    assert stored[0] == digest(token) and stored[1] == "read,submit"
    assert cli("token", "list") == 0
    listing = capsys.readouterr().out
    assert "lims-1" in listing and token not in listing
    assert cli("token", "create", "--client", "lims-2", "--scope", "sign") == 2
    assert "no scope can sign" in capsys.readouterr().err
    assert cli("token", "revoke", "--client", "lims-1", "--reason", "rotated") == 0
