"""Role × route and scope × route matrix over every route of the real app (OWASP ASVS V4.1.3, fail closed).

The test enumerates ``app.routes``: every route must declare its action (see docs/security.md);
then every role (and nobody, and every API scope on /api/ routes) is sent to every route and the
answer must match the permissions table: refused by the guard (403, or 401 / redirect to sign-in
for nobody, each marked with the X-Access-Denied header) exactly when the table says no. Runs on SQLite (the authorization
layer does not depend on the back-end; the flow tests cover both).
"""

from __future__ import annotations

import re
from collections.abc import Iterator

import pytest

from service.release.permissions import SIGNING_ACTIONS, Action, Role, Scope, client_may, person_may
from service.services.security_clients import create_token
from service.web.auth import SESSION_COOKIE
from service.web.guard import DENIED_HEADER, RouteInfo, route_table, undeclared_routes

from tests.security.factories import Site, make_person, open_session

# Routes open to everyone. Adding one is a reviewed change: list it here with the reason.
PUBLIC_ROUTES = {
    ("GET", "/login"): "the sign-in form",
    ("POST", "/login"): "signing in",
    ("GET", "/healthz"): "liveness probe; says nothing about records",
    ("GET", "/readyz"): "readiness probe; says nothing about records",
}
PUBLIC_PREFIXES = ("/static",)


def _path(route: RouteInfo) -> str:
    def fill(m: re.Match[str]) -> str:
        name, conv = m.group(1), m.group(2) or ""
        return "999999" if conv in (":int", ":float") else f"nothing-{name}"
    return re.sub(r"\{(\w+)(:\w+)?\}", fill, route.path)


def _routes(site: Site) -> Iterator[tuple[str, RouteInfo, frozenset[Action]]]:
    for route in route_table(site.app):
        for method in sorted(route.methods - {"HEAD"}):
            yield method, route, route.actions


def _refused_by_guard(r) -> bool:  # type: ignore[no-untyped-def]
    """Refused by the permission layer: 401/403/303 marked with X-Access-Denied (the route never ran)."""
    marked = DENIED_HEADER.lower() in {k.lower() for k in r.headers}
    if marked:
        assert r.status_code in (401, 403, 303), r.status_code
    return marked


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Site:
    from service.store.migrations import upgrade

    url = f"sqlite:///{tmp_path_factory.mktemp('matrix') / 'matrix.db'}"
    upgrade(url)
    s = Site(url)
    for role in Role:
        make_person(s.engine, f"{role.value}.one", role.value)
    return s


def test_every_route_declares_an_action_and_public_routes_are_listed(site: Site) -> None:
    missing = undeclared_routes(site.app)
    assert not missing, f"routes without a declared action (closed at run time): {missing}"
    unexpected = []
    for method, route, actions in _routes(site):
        if Action.public in actions and (method, route.path) not in PUBLIC_ROUTES \
                and not route.path.startswith(PUBLIC_PREFIXES):
            unexpected.append(f"{method} {route.path}")
    assert not unexpected, f"public routes not in the reviewed list: {unexpected}"


def test_role_route_matrix_has_no_mismatch(site: Site) -> None:
    from service.store import security as repo
    from service.store.unit_of_work import UnitOfWork

    with UnitOfWork(site.engine, write=False) as uow:
        people = {u.username.split(".")[0]: u.id for u in repo.list_users(uow.session)}
    mismatches, checked = [], 0
    get_tokens = {role: open_session(site.engine, uid, now=site.clock()) for role, uid in people.items()}
    for method, route, actions in _routes(site):
        path = _path(route)
        # Nobody signed in: refused unless public.
        r = site.client().request(method, path)
        public = actions == {Action.public}
        if _refused_by_guard(r) == public:
            mismatches.append(f"anonymous {method} {route.path}: {r.status_code}")
        for role, uid in people.items():
            expected = all(person_may([role], a) for a in actions)
            token = get_tokens[role] if method == "GET" else open_session(site.engine, uid, now=site.clock())
            headers = {} if method == "GET" else {"X-CSRF-Token": site.csrf(token)}
            client = site.client(token)
            r = client.request(method, path, headers=headers)
            checked += 1
            if _refused_by_guard(r) == expected:
                mismatches.append(f"{role} {method} {route.path}: expected {'allowed' if expected else 'denied'}, "
                                  f"got {r.status_code}")
    assert checked >= 4 * 7
    assert not mismatches, "\n".join(mismatches)


def test_scope_route_matrix_on_the_api(site: Site) -> None:
    tokens = {scope: create_token(site.engine, client=f"client-{scope.value}", scopes=scope.value) for scope in Scope}
    mismatches = []
    for method, route, actions in _routes(site):
        if actions & SIGNING_ACTIONS:  # a token never signs, on any route
            for token in tokens.values():
                r = site.client().request(method, _path(route), headers={"Authorization": f"Bearer {token}"})
                if not _refused_by_guard(r):
                    mismatches.append(f"a token reached the signing route {method} {route.path}: {r.status_code}")
        if not route.path.startswith("/api/"):
            continue
        for scope, token in tokens.items():
            expected = all(client_may([scope], a) for a in actions)
            r = site.client().request(method, _path(route), headers={"Authorization": f"Bearer {token}"})
            if _refused_by_guard(r) == expected:
                mismatches.append(f"scope {scope.value} {method} {route.path}: {r.status_code}")
        r = site.client().request(method, _path(route), headers={"Authorization": "Bearer bgt_00000000_" + "x" * 43})
        if actions != {Action.public} and r.status_code != 401:
            mismatches.append(f"bad token {method} {route.path}: {r.status_code}")
    assert not mismatches, "\n".join(mismatches)


def test_a_route_that_declares_nothing_is_closed(site: Site) -> None:
    from service.config import Settings
    from service.web.app import create_app

    app = create_app(Settings(database_url=site.db_url))

    @app.get("/forgot-to-declare")
    def forgot() -> dict[str, str]:
        return {"secret": "records"}

    assert any("/forgot-to-declare" in r for r in undeclared_routes(app))
    from fastapi.testclient import TestClient

    token = open_session(site.engine, 1)
    c = TestClient(app)
    c.cookies.set(SESSION_COOKIE, token)
    r = c.get("/forgot-to-declare")
    assert r.status_code == 403 and "secret" not in r.text
