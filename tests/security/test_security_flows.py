"""People, sessions, signatures, lock-out, CSRF and headers on a real database (SQLite and PostgreSQL).

The done-when list of the security issue, one test each, plus the controls that show each test can fail.
"""

from __future__ import annotations

import json
from datetime import timedelta

import pytest
from sqlalchemy import text

from service.release.permissions import Action
from service.security.passwords import hash_parameters
from service.services import security_accounts as accounts
from service.services.security_credentials import CredentialsRefused
from service.services.security_sessions import current_session, sign_in
from service.services.security_signing import SignatureRefused, confirm_signer
from service.security.session_rules import SessionRules
from service.store.audit import events_for
from service.store.unit_of_work import UnitOfWork

from tests.security.factories import PASSWORD, T0, Site, make_person, open_session

RULES = SessionRules.from_minutes(idle_minutes=15, absolute_hours=12)


@pytest.fixture
def site(db_url: str) -> Site:
    return Site(db_url)


def _events(site: Site, action: str) -> list[dict]:
    with UnitOfWork(site.engine, write=False) as uow:
        return [{"username": e.username, "record_id": e.record_id, "new": json.loads(e.new_values),
                 "reason": e.reason} for e in events_for(uow.session, limit=10000) if e.action == action]


def _signed_in(site: Site, username: str, password: str = PASSWORD, **kw):  # type: ignore[no-untyped-def]
    return sign_in(site.engine, username=username, password=password, address="10.0.0.5", now=T0, **kw)


# ------------------------------------------------------------------ signatures

def test_a_technician_cannot_sign(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    tech = _signed_in(site, "tess.tech")
    for action in (Action.sign_review, Action.sign_disposition, Action.sign_approval):
        with pytest.raises(SignatureRefused, match="do not allow"):
            confirm_signer(site.engine, signed_in=tech, username="tess.tech", password=PASSWORD, action=action,
                           address="10.0.0.5", now=T0)
    refused = _events(site, "user.signature-refused")
    assert len(refused) == 3 and all(e["username"] == "tess.tech" for e in refused)


def test_an_administrator_cannot_sign_for_another_person(site: Site) -> None:
    make_person(site.engine, "quinn.qa", "quality")
    make_person(site.engine, "ada.admin", "administrator")
    make_person(site.engine, "abe.both", "administrator,quality")
    admin = _signed_in(site, "ada.admin")
    # An administrator holds no signing action at all ...
    with pytest.raises(SignatureRefused, match="do not allow"):
        confirm_signer(site.engine, signed_in=admin, username="quinn.qa", password=PASSWORD,
                       action=Action.sign_disposition, address="10.0.0.5", now=T0)
    # ... and one who is also quality may sign only as themself, never with another's id and password.
    both = _signed_in(site, "abe.both")
    with pytest.raises(SignatureRefused, match="always your own"):
        confirm_signer(site.engine, signed_in=both, username="quinn.qa", password=PASSWORD,
                       action=Action.sign_disposition, address="10.0.0.5", now=T0)
    refused = _events(site, "user.signature-refused")
    assert [e["username"] for e in refused] == ["ada.admin", "abe.both"]
    assert refused[1]["new"]["user_id_entered"] == "quinn.qa"
    # Control: abe signing as abe is accepted, and the signer returned is abe.
    actor = confirm_signer(site.engine, signed_in=both, username="abe.both", password=PASSWORD,
                           action=Action.sign_disposition, address="10.0.0.5", now=T0)
    assert actor.username == "abe.both"


def test_a_wrong_password_at_signing_is_refused_and_audited(site: Site) -> None:
    make_person(site.engine, "quinn.qa", "quality")
    qa = _signed_in(site, "quinn.qa")
    with pytest.raises(SignatureRefused, match="not right; nothing was signed"):
        confirm_signer(site.engine, signed_in=qa, username="quinn.qa", password="not my password at all",
                       action=Action.sign_disposition, address="10.0.0.5", now=T0)
    failed = _events(site, "user.signature-failed")
    assert len(failed) == 1 and failed[0]["username"] == "quinn.qa"
    assert failed[0]["new"]["outcome"] == "wrong-password"
    # Control: the right password signs; the first signature needed the user id, later ones only the password.
    with pytest.raises(SignatureRefused, match="both your user id"):
        confirm_signer(site.engine, signed_in=qa, username=None, password=PASSWORD,
                       action=Action.sign_disposition, address="10.0.0.5", now=T0)
    confirm_signer(site.engine, signed_in=qa, username="quinn.qa", password=PASSWORD,
                   action=Action.sign_disposition, address="10.0.0.5", now=T0)
    again = current_session(site.engine, qa.token, rules=RULES, now=T0 + timedelta(minutes=1))
    assert again is not None and again.signed_once
    confirm_signer(site.engine, signed_in=again, username=None, password=PASSWORD,
                   action=Action.sign_disposition, address="10.0.0.5", now=T0 + timedelta(minutes=1))


def test_after_an_admin_reset_the_person_must_choose_a_password_before_signing(site: Site) -> None:
    make_person(site.engine, "quinn.qa", "quality")
    _, temporary = accounts.reset_password(site.engine, username="quinn.qa", reason="forgot it")
    qa = _signed_in(site, "quinn.qa", password=temporary)
    assert qa.must_change_password
    with pytest.raises(SignatureRefused, match="choose a new password"):
        confirm_signer(site.engine, signed_in=qa, username="quinn.qa", password=temporary,
                       action=Action.sign_disposition, address="10.0.0.5", now=T0)
    accounts.change_own_password(site.engine, actor=qa.actor, current_password=temporary,
                                 new_password="amber kettle meadow 7", keep_session_id=qa.session_row_id, now=T0)
    fresh = current_session(site.engine, qa.token, rules=RULES, now=T0)
    assert fresh is not None and not fresh.must_change_password
    confirm_signer(site.engine, signed_in=fresh, username="quinn.qa", password="amber kettle meadow 7",
                   action=Action.sign_disposition, address="10.0.0.5", now=T0)
    assert len(_events(site, "user.password-reset")) == 1 and len(_events(site, "user.password-changed")) == 1


# ------------------------------------------------------------------ lock-out

def test_twenty_wrong_passwords_lock_the_account_and_the_lock_is_audited(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    now = T0
    for i in range(1, 21):
        now += timedelta(seconds=61)  # past every throttling delay, so each password is really checked
        with pytest.raises(CredentialsRefused) as err:
            sign_in(site.engine, username="tess.tech", password=f"wrong password number {i}", address="10.0.0.5",
                    now=now)
        assert err.value.locked == (i == 20), i
    locks = _events(site, "user.locked")
    assert len(locks) == 1 and locks[0]["record_id"] == str(accounts.list_people(site.engine)[0].id)
    assert locks[0]["new"]["consecutive_failures"] == 20
    assert len(_events(site, "user.sign-in-failed")) == 20
    # The right password is now refused too, until an administrator unlocks the account.
    with pytest.raises(CredentialsRefused, match="locked"):
        sign_in(site.engine, username="tess.tech", password=PASSWORD, address="10.0.0.5", now=now + timedelta(minutes=1))
    accounts.unlock(site.engine, username="tess.tech", reason="confirmed by phone it was her")
    assert sign_in(site.engine, username="tess.tech", password=PASSWORD, address="10.0.0.5",
                   now=now + timedelta(minutes=2)).actor.username == "tess.tech"


def test_nineteen_wrong_passwords_do_not_lock_and_a_success_resets_the_count(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    now = T0
    for i in range(19):
        now += timedelta(seconds=61)
        with pytest.raises(CredentialsRefused):
            sign_in(site.engine, username="tess.tech", password="nope nope nope", address="10.0.0.5", now=now)
    sign_in(site.engine, username="tess.tech", password=PASSWORD, address="10.0.0.5", now=now + timedelta(seconds=61))
    assert accounts.list_people(site.engine)[0].failed_attempts == 0
    assert not _events(site, "user.locked")


def test_throttling_refuses_fast_retries_without_checking_the_password(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    for _ in range(5):
        with pytest.raises(CredentialsRefused):
            sign_in(site.engine, username="tess.tech", password="nope nope nope", address="10.0.0.5", now=T0)
    with pytest.raises(CredentialsRefused, match="wait 1 seconds") as err:
        sign_in(site.engine, username="tess.tech", password=PASSWORD, address="10.0.0.5", now=T0)
    assert err.value.retry_after == 1
    assert len(_events(site, "user.sign-in-failed")) == 5  # the throttled attempt checked nothing


def test_unknown_user_is_refused_like_a_wrong_password_and_audited(site: Site) -> None:
    with pytest.raises(CredentialsRefused, match="not right"):
        sign_in(site.engine, username="nobody.here", password=PASSWORD, address="10.0.0.5", now=T0)
    assert _events(site, "user.sign-in-failed")[0]["new"]["username_entered"] == "nobody.here"


# ------------------------------------------------------------------ sessions over HTTP

def test_a_session_is_dead_after_logout(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.sign_in("tess.tech")
    token = c.cookies.get("bandgate_session")
    assert c.get("/account/password").status_code == 200
    r = c.post("/logout", data={"csrf_token": site.csrf(token)})
    assert r.status_code == 303 and r.headers["location"] == "/login"
    # The old cookie value, replayed, is dead on the server.
    replay = site.client(token)
    r = replay.get("/account/password")
    assert r.status_code == 303 and r.headers["location"].startswith("/login")
    assert current_session(site.engine, token, rules=RULES, now=T0) is None
    assert [e["new"]["how"] for e in _events(site, "user.signed-out")] == ["signed-out"]
    assert len(_events(site, "user.signed-in")) == 1


def test_a_session_is_dead_after_the_idle_timeout(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.sign_in("tess.tech")
    site.clock.advance(minutes=14)
    assert c.get("/account/password").status_code == 200  # control: still alive, and activity moves it on
    site.clock.advance(minutes=14)
    assert c.get("/account/password").status_code == 200
    site.clock.advance(minutes=15)
    r = c.get("/account/password")
    assert r.status_code == 303 and r.headers["location"].startswith("/login")
    assert [e["new"]["how"] for e in _events(site, "user.signed-out")] == ["idle"]


def test_absolute_timeout_ends_a_busy_session(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.sign_in("tess.tech")
    for _ in range(51):  # busy all day: a request every 14 minutes keeps the idle timeout away
        site.clock.advance(minutes=14)
        assert c.get("/account/password").status_code == 200
    site.clock.advance(minutes=14)  # 11 h 54 min + 14 min: past the 12 h absolute limit
    assert c.get("/account/password").status_code == 303
    assert [e["new"]["how"] for e in _events(site, "user.signed-out")] == ["expired"]


def test_each_sign_in_makes_a_new_session_id(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.client("attacker-chosen-value-" + "x" * 30)
    r = c.post("/login", data={"username": "tess.tech", "password": PASSWORD})
    first = r.cookies.get("bandgate_session")
    assert first and not first.startswith("attacker")
    second = site.sign_in("tess.tech").cookies.get("bandgate_session")
    assert second != first


def test_disabling_a_user_ends_all_their_sessions(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    a, b = site.sign_in("tess.tech"), site.sign_in("tess.tech")
    assert a.get("/account/password").status_code == 200 and b.get("/account/password").status_code == 200
    accounts.set_active(site.engine, username="tess.tech", active=False, reason="left the company")
    assert a.get("/account/password").status_code == 303 and b.get("/account/password").status_code == 303
    assert _events(site, "user.disabled")[0]["new"]["sessions_ended"] == 2
    with pytest.raises(CredentialsRefused, match="disabled"):
        sign_in(site.engine, username="tess.tech", password=PASSWORD, address="x", now=T0)


def test_must_change_password_sends_the_person_to_the_password_page(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician", must_change=True)
    c = site.client()
    r = c.post("/login", data={"username": "tess.tech", "password": PASSWORD, "next": "/admin/users"})
    assert r.headers["location"] == "/account/password"
    r = c.get("/admin/users")
    assert r.status_code in (303, 403)


# ------------------------------------------------------------------ CSRF

def test_a_forged_form_post_without_the_csrf_token_changes_nothing(site: Site) -> None:
    make_person(site.engine, "ada.admin", "administrator")
    c = site.sign_in("ada.admin")
    token = c.cookies.get("bandgate_session")
    form = {"username": "mallory.x", "printed_name": "Mallory X", "roles": ["quality"],
            "password": "sneaky long password 1"}
    assert c.post("/admin/users", data=form).status_code == 403
    assert c.post("/admin/users", data={**form, "csrf_token": "0" * 64}).status_code == 403
    other = site.sign_in("ada.admin").cookies.get("bandgate_session")  # another session's token is no good either
    assert c.post("/admin/users", data={**form, "csrf_token": site.csrf(other)}).status_code == 403
    assert c.post("/admin/users", data={**form, "csrf_token": site.csrf(token)},
                  headers={"Origin": "https://evil.example"}).status_code == 403
    assert [p.username for p in accounts.list_people(site.engine)] == ["ada.admin"]
    # Control: with the session's token the same post creates the person.
    r = c.post("/admin/users", data={**form, "csrf_token": site.csrf(token)})
    assert r.status_code == 200, r.text
    assert "mallory.x" in [p.username for p in accounts.list_people(site.engine)]


# ------------------------------------------------------------------ storage facts

def test_argon2_parameters_in_the_stored_hash_meet_the_minimum(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    with site.engine.connect() as conn:
        stored = conn.execute(text("SELECT password_hash FROM users WHERE username = 'tess.tech'")).scalar_one()
    params = hash_parameters(stored)  # OWASP Password Storage Cheat Sheet: argon2id m>=19456 KiB, t>=2, p>=1
    assert stored.startswith("$argon2id$")
    assert params.memory_kib >= 19456 and params.time_cost >= 2 and params.parallelism >= 1
    assert PASSWORD not in stored


def test_users_are_never_deleted_and_usernames_never_reassigned(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    for sql in ("DELETE FROM users WHERE username = 'tess.tech'",
                "UPDATE users SET username = 'someone.else' WHERE username = 'tess.tech'"):
        with pytest.raises(Exception, match="never"):
            with site.engine.begin() as conn:
                conn.execute(text(sql))
    with pytest.raises(Exception, match="taken"):
        make_person(site.engine, "tess.tech", "quality")
    with site.engine.begin() as conn:  # control: other columns may change
        conn.execute(text("UPDATE users SET printed_name = 'Tess T.' WHERE username = 'tess.tech'"))


def test_session_ids_and_tokens_are_stored_only_as_hashes(site: Site) -> None:
    from service.services.security_clients import client_for_token, create_token, revoke_tokens

    make_person(site.engine, "tess.tech", "technician")
    c = site.sign_in("tess.tech")
    session_token = c.cookies.get("bandgate_session")
    token = create_token(site.engine, client="lims-1", scopes="read,submit")
    with site.engine.connect() as conn:
        dump = " ".join(str(v) for table in ("user_sessions", "api_tokens")
                        for row in conn.execute(text(f"SELECT * FROM {table}")).all() for v in row)
    assert session_token not in dump and token not in dump
    found = client_for_token(site.engine, token)
    assert found is not None and found.scopes == {"read", "submit"}
    revoke_tokens(site.engine, client="lims-1", reason="rotated")
    assert client_for_token(site.engine, token) is None


# ------------------------------------------------------------------ headers and cookies

def test_security_headers_and_cookie_flags(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    r = site.client().get("/login")
    csp = r.headers["content-security-policy"]
    assert "script-src 'self'" in csp and "'unsafe-inline'" not in csp.split("script-src")[1].split(";")[0]
    assert "frame-ancestors 'none'" in csp
    assert r.headers["x-content-type-options"] == "nosniff"
    assert r.headers["referrer-policy"] == "same-origin"
    assert r.headers["cache-control"] == "no-store"
    assert site.client().get("/healthz").headers["cache-control"] == "no-store"
    r = site.client().post("/login", data={"username": "tess.tech", "password": PASSWORD})
    cookie = r.headers["set-cookie"].lower()
    assert "httponly" in cookie and "samesite=lax" in cookie and "secure" not in cookie
    https = Site(site.db_url, base_url="https://testserver")
    r = https.client().post("/login", data={"username": "tess.tech", "password": PASSWORD})
    assert "secure" in r.headers["set-cookie"].lower()
    assert "strict-transport-security" in r.headers


def test_an_oversized_body_is_refused_while_streaming(site: Site) -> None:
    small = Site(site.db_url)
    small.app.state.settings = small.settings  # limit comes from the settings at install time
    limit = small.settings.max_upload_bytes + 256 * 1024
    r = small.client().post("/login", content=b"x" * (limit + 1),
                            headers={"content-type": "application/x-www-form-urlencoded"})
    assert r.status_code == 413

    def chunks():  # no Content-Length: the limit is enforced on the bytes as they stream in
        for _ in range(limit // 65536 + 2):
            yield b"y" * 65536

    r = small.client().post("/login", content=chunks(), headers={"content-type": "application/x-www-form-urlencoded"})
    assert r.status_code == 413 and "larger than the limit" in r.text
    assert small.client().post("/login", content=b"username=a&password=b",  # control: small bodies pass
                               headers={"content-type": "application/x-www-form-urlencoded"}).status_code == 401


def test_migrated_security_schema_matches_the_store_tables(db_url: str) -> None:
    from alembic.autogenerate import compare_metadata
    from alembic.migration import MigrationContext

    from service.store.engine import make_engine
    from service.store.security import metadata

    engine = make_engine(db_url)
    with engine.connect() as conn:
        diff = compare_metadata(MigrationContext.configure(conn, opts={"compare_type": True}), metadata)
    engine.dispose()
    ours = set(metadata.tables) - {"users"}  # users: declared here only with the columns we use

    def ours_only(d: tuple) -> bool:  # type: ignore[type-arg]
        if d[0] in ("remove_table", "add_table"):
            return d[1].name in ours
        if d[0] in ("remove_index", "add_index"):
            return d[1].table.name in ours
        if d[0] in ("remove_column", "add_column"):
            return d[2] in ours or (d[2] == "users" and d[0] == "add_column")
        return True

    assert [d for d in diff if ours_only(d)] == []


def test_a_role_change_is_audited_with_old_and_new_and_applies_at_once(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.sign_in("tess.tech")
    assert c.get("/account/password").status_code == 200
    accounts.set_roles(site.engine, username="tess.tech", roles="technician,supervisor", reason="promoted")
    changes = _events(site, "user.roles-changed")
    assert len(changes) == 1 and changes[0]["reason"] == "promoted"
    assert changes[0]["new"]["roles"] == ["supervisor", "technician"]
    assert c.get("/account/password").status_code == 303  # the old session (old rights) has ended
    with pytest.raises(Exception, match="reason"):
        accounts.set_roles(site.engine, username="tess.tech", roles="quality", reason=" ")


def test_admin_page_shows_people_and_attempts_and_its_forms_work(site: Site) -> None:
    make_person(site.engine, "ada.admin", "administrator")
    make_person(site.engine, "tess.tech", "technician")
    bad = site.client().post("/login", data={"username": "tess.tech", "password": "wrong wrong wrong"})
    assert bad.status_code == 401 and "not right" in bad.text and "wrong wrong" not in bad.text
    c = site.sign_in("ada.admin")
    token = c.cookies.get("bandgate_session")
    page = c.get("/admin/users")
    assert page.status_code == 200 and "tess.tech" in page.text and "wrong-password" in page.text
    r = c.post("/admin/users/tess.tech/reset-password", data={"reason": "forgot", "csrf_token": site.csrf(token)})
    assert r.status_code == 200 and "temporary password (shown once)" in r.text
    r = c.post("/admin/users/tess.tech/disable", data={"reason": "", "csrf_token": site.csrf(token)})
    assert r.status_code == 422 and "reason" in r.text
    r = c.post("/admin/users/ada.admin/disable", data={"reason": "oops", "csrf_token": site.csrf(token)})
    assert r.status_code == 422 and "your own account" in r.text
    # A technician may not see the page at all; one whose password was reset is sent to choose one first.
    tom = make_person(site.engine, "tom.tech", "technician")
    assert site.client(open_session(site.engine, tom.id, now=site.clock())).get("/admin/users").status_code == 403
    tess = site.client(open_session(site.engine, accounts.list_people(site.engine)[1].id, now=site.clock()))
    assert tess.get("/admin/users").headers["location"] == "/account/password"


def test_login_throttling_answers_429_with_retry_after(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    c = site.client()
    for _ in range(5):
        assert c.post("/login", data={"username": "tess.tech", "password": "wrong wrong wrong"}).status_code == 401
    r = c.post("/login", data={"username": "tess.tech", "password": PASSWORD})
    assert r.status_code == 429 and r.headers["retry-after"] == "1" and "wait" in r.text
    site.clock.advance(seconds=2)
    assert c.post("/login", data={"username": "tess.tech", "password": PASSWORD}).status_code == 303


def test_next_after_sign_in_is_only_a_local_path(site: Site) -> None:
    make_person(site.engine, "tess.tech", "technician")
    for target, expected in [("/account/password", "/account/password"), ("https://evil.example/", "/"),
                             ("//evil.example", "/"), ("/\\evil", "/")]:
        r = site.client().post("/login", data={"username": "tess.tech", "password": PASSWORD, "next": target})
        assert r.headers["location"] == expected


def test_per_address_throttling_stops_password_spraying(site: Site) -> None:
    from service.security.throttle import ThrottlePolicy

    policy = ThrottlePolicy(address_failures=3)
    for name in ("ann.a", "bob.b", "cat.c", "dan.d"):
        make_person(site.engine, name, "technician")
    for name in ("ann.a", "bob.b", "cat.c"):  # one wrong password each, from one address
        with pytest.raises(CredentialsRefused, match="not right"):
            sign_in(site.engine, username=name, password="summer sunshine 99", address="10.9.9.9", now=T0, policy=policy)
    with pytest.raises(CredentialsRefused, match="network address") as err:
        sign_in(site.engine, username="dan.d", password=PASSWORD, address="10.9.9.9", now=T0, policy=policy)
    assert err.value.retry_after == 15 * 60
    # Another address is unaffected, and the window moves on.
    sign_in(site.engine, username="dan.d", password=PASSWORD, address="10.1.1.1", now=T0, policy=policy)
    sign_in(site.engine, username="dan.d", password=PASSWORD, address="10.9.9.9", now=T0 + timedelta(minutes=16),
            policy=policy)
