"""Plain factories for security tests: people, sessions, signed-in HTTP clients, a settable clock."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone

from fastapi.testclient import TestClient
from sqlalchemy.engine import Engine

from service.config import Settings
from service.security.tokens import csrf_token, digest, new_session_id
from service.services.security_accounts import Person, create_user
from service.store import security as repo
from service.store.unit_of_work import UnitOfWork
from service.web.app import create_app
from service.web.auth import SESSION_COOKIE

PASSWORD = "violet lantern ferry 42"
SECRET = "test-secret-" + "x" * 40
T0 = datetime(2026, 12, 2, 8, 0, tzinfo=timezone.utc)


@dataclass
class Clock:
    now: datetime = T0

    def __call__(self) -> datetime:
        return self.now

    def advance(self, **kw: float) -> datetime:
        self.now = self.now + timedelta(**kw)
        return self.now


def make_person(engine: Engine, username: str, roles: str, *, password: str = PASSWORD,
                must_change: bool = False, printed_name: str | None = None) -> Person:
    return create_user(engine, username=username, printed_name=printed_name or username.replace(".", " ").title(),
                       roles=roles, password=password, must_change_password=must_change)


def open_session(engine: Engine, user_id: int, *, now: datetime = T0) -> str:
    """A live session made directly in the store (no password check): returns the cookie value."""
    token = new_session_id()
    with UnitOfWork(engine) as uow:
        repo.insert_session(uow.session, token_hash=digest(token), user_id=user_id, now=now, address="testclient",
                            user_agent="pytest")
        uow.commit()
    return token


@dataclass
class Site:
    """An app on a real database, a clock the test moves, and a TestClient."""

    db_url: str
    clock: Clock = field(default_factory=Clock)
    base_url: str = "http://testserver"

    def __post_init__(self) -> None:
        self.settings = Settings(database_url=self.db_url, secret_key=SECRET)
        self.app = create_app(self.settings)
        self.app.state.clock = self.clock
        self.engine: Engine = self.app.state.engine

    def client(self, token: str | None = None) -> TestClient:
        c = TestClient(self.app, base_url=self.base_url, follow_redirects=False)
        if token:
            c.cookies.set(SESSION_COOKIE, token)
        return c

    def csrf(self, token: str) -> str:
        return csrf_token(token, SECRET)

    def sign_in(self, username: str, password: str = PASSWORD) -> TestClient:
        c = self.client()
        r = c.post("/login", data={"username": username, "password": password, "next": "/"})
        assert r.status_code == 303, r.text
        return c
