"""Security costs: one argon2id hash (what every sign-in and signature pays), the per-request session
and token look-ups, and a signed-in page request through the whole stack (guard, CSRF, headers)."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Any

from service.bench import BenchCase

PASSWORD = "bench lantern ferry 2026"


def _hash(_: Any) -> None:
    from service.security.passwords import hash_password

    hash_password(PASSWORD)


def _setup_site() -> dict[str, Any]:
    from fastapi.testclient import TestClient

    from service.config import Settings
    from service.services.security_accounts import create_user
    from service.services.security_clients import create_token
    from service.services.security_sessions import sign_in
    from service.store.migrations import upgrade
    from service.web.app import create_app
    from service.web.auth import SESSION_COOKIE

    url = f"sqlite:///{Path(tempfile.mkdtemp(prefix='bandgate-bench-sec-')) / 'bench.db'}"
    upgrade(url)
    app = create_app(Settings(database_url=url))
    engine = app.state.engine
    create_user(engine, username="bench.tech", printed_name="Bench Tech", roles="technician", password=PASSWORD,
                must_change_password=False)
    signed = sign_in(engine, username="bench.tech", password=PASSWORD, address="127.0.0.1")
    token = create_token(engine, client="bench-lims", scopes="read")
    client = TestClient(app)
    client.cookies.set(SESSION_COOKIE, signed.token)
    return {"engine": engine, "session": signed.token, "token": token, "client": client, "app": app}


def _session_lookup(ctx: dict[str, Any]) -> None:
    from service.security.session_rules import SessionRules
    from service.services.security_sessions import current_session

    assert current_session(ctx["engine"], ctx["session"],
                           rules=SessionRules.from_minutes(idle_minutes=15, absolute_hours=12)) is not None


def _token_lookup(ctx: dict[str, Any]) -> None:
    from service.services.security_clients import client_for_token

    assert client_for_token(ctx["engine"], ctx["token"]) is not None


def _page(ctx: dict[str, Any]) -> None:
    r = ctx["client"].get("/account/password")
    assert r.status_code == 200, r.status_code


def _health(ctx: dict[str, Any]) -> None:
    assert ctx["client"].get("/healthz").status_code == 200


def cases() -> list[BenchCase]:
    return [
        BenchCase("argon2id hash (m=19456 KiB, t=2, p=1)", _hash, repeats=10,
                  aim="OWASP minimum cost; paid once per sign-in or signature"),
        BenchCase("session look-up (SQLite)", _session_lookup, setup=_setup_site, repeats=200),
        BenchCase("API token look-up (SQLite)", _token_lookup, setup=_setup_site, repeats=200),
        BenchCase("signed-in page GET /account/password (in-process)", _page, setup=_setup_site, repeats=100),
        BenchCase("GET /healthz through the security middleware (in-process)", _health, setup=_setup_site,
                  repeats=100),
    ]
