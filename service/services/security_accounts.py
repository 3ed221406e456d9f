"""People: create, disable, enable, reset a password, change roles, unlock, change one's own password.

Every change is one unit of work with its audit event (21 CFR 11.10(e), 11.300; Annex 11 §12.3).
A user is never deleted and a username is never reassigned: the database refuses it (migration
0003), so an id in an old record always names the same person.
"""

from __future__ import annotations

import re
import secrets
from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any

from sqlalchemy.engine import Engine

from service.errors import Conflict, FieldProblem, Forbidden, InvalidInput, NotFound
from service.release.actor import Actor
from service.release.permissions import ROLE_ALIASES, Role
from service.security.passwords import check_password_policy, hash_password, verify_password
from service.store import security as repo
from service.store.audit import SYSTEM_ACTOR, append_event
from service.store.unit_of_work import UnitOfWork

USERNAME_RE = re.compile(r"^[a-z][a-z0-9._-]{1,63}$")


def _now(now: datetime | None) -> datetime:
    return (now or datetime.now(timezone.utc)).astimezone(timezone.utc)


@dataclass(frozen=True, kw_only=True)
class Person:
    """What the administrator sees of a person (never the hash)."""

    id: int
    username: str
    printed_name: str
    roles: tuple[str, ...]
    active: bool
    must_change_password: bool
    locked: bool
    locked_until: datetime | None
    failed_attempts: int
    created_at: datetime


def _person(u: repo.UserRow, now: datetime) -> Person:
    return Person(id=u.id, username=u.username, printed_name=u.printed_name, roles=u.roles, active=u.active,
                  must_change_password=u.must_change_password,
                  locked=bool(u.locked_until and u.locked_until > now), locked_until=u.locked_until,
                  failed_attempts=u.failed_attempts, created_at=u.created_at)


def parse_role_names(values: list[str] | tuple[str, ...] | str, *, field: str = "roles") -> tuple[str, ...]:
    """Validate role names (comma-separated text or a list); at least one, each known."""
    items = values.split(",") if isinstance(values, str) else list(values)
    lowered = {v.strip().lower() for v in items if v.strip()}
    names = tuple(sorted({ROLE_ALIASES[n].value if n in ROLE_ALIASES else n for n in lowered}))
    known = {r.value for r in Role}
    unknown = [n for n in names if n not in known]
    if not names or unknown:
        msg = (f"unknown role(s) {', '.join(unknown)}; " if unknown else "give at least one role; ") + \
            f"choose from {', '.join(sorted(known))}"
        raise InvalidInput(msg, fields=[FieldProblem(field, msg)])
    return names


def _check_username(username: str) -> str:
    name = username.strip().lower()
    if not USERNAME_RE.match(name):
        msg = ("a username is 2 to 64 characters: a lowercase letter first, then lowercase letters, digits, "
               "'.', '_' or '-'")
        raise InvalidInput(msg, fields=[FieldProblem("username", msg)])
    return name


def _check_printed_name(printed_name: str) -> str:
    name = " ".join(printed_name.split())
    if not 2 <= len(name) <= 200:
        msg = "the printed name (as it appears on signed records) must be 2 to 200 characters"
        raise InvalidInput(msg, fields=[FieldProblem("printed_name", msg)])
    return name


def _collect(problems: list[FieldProblem], check: Any, *args: Any) -> Any:
    """Run one validation; on failure keep its field problems and return None (report them all at once)."""
    try:
        return check(*args)
    except InvalidInput as exc:
        problems.extend(exc.fields or [FieldProblem("request", exc.message)])
        return None


def _admin_check(admin: Actor | None) -> Actor:
    """Administration from the command line acts as the system; from a page as an administrator."""
    if admin is None:
        return SYSTEM_ACTOR
    if Role.administrator.value not in admin.roles:
        raise Forbidden("only an administrator may manage people")
    return admin


def create_user(engine: Engine, *, username: str, printed_name: str, roles: list[str] | tuple[str, ...] | str,
                password: str, admin: Actor | None = None, must_change_password: bool = True,
                now: datetime | None = None) -> Person:
    """Create a person. The first password is set by the administrator, so by default it must be
    changed at first sign-in (the person is then the only one who knows it)."""
    now = _now(now)
    actor = _admin_check(admin)
    problems: list[FieldProblem] = []
    name = _collect(problems, _check_username, username) or username
    printed = _collect(problems, _check_printed_name, printed_name) or printed_name
    role_names = _collect(problems, parse_role_names, roles) or ()
    _collect(problems, lambda: check_password_policy(password, username=name, printed_name=printed))
    if problems:
        raise InvalidInput("; ".join(f"{p.path}: {p.message}" for p in problems), fields=problems)
    pw_hash = hash_password(password)
    with UnitOfWork(engine) as uow:
        if repo.user_by_username(uow.session, name) is not None:
            raise Conflict(f"the username {name!r} is taken (usernames are never reused); choose another",
                           fields=[FieldProblem("username", "taken")])
        uid = repo.insert_user(uow.session, username=name, printed_name=printed, roles=role_names,
                               password_hash=pw_hash, must_change_password=must_change_password, now=now)
        append_event(uow.session, actor=actor, action="user.created", record_type="user", record_id=uid,
                     new={"username": name, "printed_name": printed, "roles": list(role_names),
                          "active": True, "must_change_password": must_change_password}, at=now)
        user = repo.user_by_id(uow.session, uid)
        uow.commit()
    assert user is not None
    return _person(user, now)


def _load(uow: UnitOfWork, username: str) -> repo.UserRow:
    user = repo.user_by_username(uow.session, username)
    if user is None:
        raise NotFound(f"there is no user {username!r}; `bandgate user list` shows who exists")
    return user


def set_active(engine: Engine, *, username: str, active: bool, reason: str, admin: Actor | None = None,
               now: datetime | None = None) -> Person:
    """Disable (ending every session of the person at once) or enable an account; a reason is required."""
    now = _now(now)
    actor = _admin_check(admin)
    if not reason.strip():
        raise InvalidInput("give a reason for disabling or enabling an account",
                           fields=[FieldProblem("reason", "required")])
    with UnitOfWork(engine) as uow:
        user = _load(uow, username)
        if admin is not None and user.id == admin.user_id and not active:
            raise Conflict("you cannot disable your own account; ask another administrator")
        if user.active == active:
            return _person(user, now)
        repo.update_user(uow.session, user.id, active=active, disabled_at=None if active else now)
        ended = 0 if active else repo.end_user_sessions(uow.session, user.id, now=now, reason="disabled")
        append_event(uow.session, actor=actor, action="user.enabled" if active else "user.disabled",
                     record_type="user", record_id=user.id, old={"active": user.active},
                     new={"active": active, "sessions_ended": ended}, reason=reason.strip(), at=now)
        after = repo.user_by_id(uow.session, user.id)
        uow.commit()
    assert after is not None
    return _person(after, now)


def generate_temporary_password() -> str:
    """A random 20-character password for a reset (the person must change it before signing)."""
    return secrets.token_urlsafe(15)


def reset_password(engine: Engine, *, username: str, reason: str, new_password: str | None = None,
                   admin: Actor | None = None, now: datetime | None = None) -> tuple[Person, str]:
    """Set a temporary password, clear any lock, end every session; the person must choose a new
    password before doing anything else. Returns the person and the temporary password."""
    now = _now(now)
    actor = _admin_check(admin)
    if not reason.strip():
        raise InvalidInput("give a reason for the password reset", fields=[FieldProblem("reason", "required")])
    temporary = new_password or generate_temporary_password()
    with UnitOfWork(engine) as uow:
        user = _load(uow, username)
        check_password_policy(temporary, username=user.username, printed_name=user.printed_name)
        repo.update_user(uow.session, user.id, password_hash=hash_password(temporary), password_changed_at=now,
                         must_change_password=True, failed_attempts=0, last_failed_at=None, locked_until=None)
        ended = repo.end_user_sessions(uow.session, user.id, now=now, reason="password-reset")
        append_event(uow.session, actor=actor, action="user.password-reset", record_type="user", record_id=user.id,
                     old={"locked_until": user.locked_until.isoformat() if user.locked_until else None},
                     new={"must_change_password": True, "sessions_ended": ended}, reason=reason.strip(), at=now)
        after = repo.user_by_id(uow.session, user.id)
        uow.commit()
    assert after is not None
    return _person(after, now), temporary


def set_roles(engine: Engine, *, username: str, roles: list[str] | tuple[str, ...] | str, reason: str,
              admin: Actor | None = None, now: datetime | None = None) -> Person:
    """Change a person's roles (audited with old and new); their sessions end so new rights apply at once."""
    now = _now(now)
    actor = _admin_check(admin)
    names = parse_role_names(roles)
    if not reason.strip():
        raise InvalidInput("give a reason for the change of roles", fields=[FieldProblem("reason", "required")])
    with UnitOfWork(engine) as uow:
        user = _load(uow, username)
        if admin is not None and user.id == admin.user_id and Role.administrator.value not in names:
            raise Conflict("you cannot remove your own administrator role; ask another administrator")
        if tuple(sorted(user.roles)) == names:
            return _person(user, now)
        repo.update_user(uow.session, user.id, roles=names)
        ended = repo.end_user_sessions(uow.session, user.id, now=now, reason="roles-changed")
        append_event(uow.session, actor=actor, action="user.roles-changed", record_type="user", record_id=user.id,
                     old={"roles": list(user.roles)}, new={"roles": list(names), "sessions_ended": ended},
                     reason=reason.strip(), at=now)
        after = repo.user_by_id(uow.session, user.id)
        uow.commit()
    assert after is not None
    return _person(after, now)


def unlock(engine: Engine, *, username: str, reason: str, admin: Actor | None = None,
           now: datetime | None = None) -> Person:
    now = _now(now)
    actor = _admin_check(admin)
    if not reason.strip():
        raise InvalidInput("give a reason for unlocking the account", fields=[FieldProblem("reason", "required")])
    with UnitOfWork(engine) as uow:
        user = _load(uow, username)
        repo.update_user(uow.session, user.id, failed_attempts=0, last_failed_at=None, locked_until=None)
        append_event(uow.session, actor=actor, action="user.unlocked", record_type="user", record_id=user.id,
                     old={"failed_attempts": user.failed_attempts,
                          "locked_until": user.locked_until.isoformat() if user.locked_until else None},
                     new={"failed_attempts": 0, "locked_until": None}, reason=reason.strip(), at=now)
        after = repo.user_by_id(uow.session, user.id)
        uow.commit()
    assert after is not None
    return _person(after, now)


def change_own_password(engine: Engine, *, actor: Actor, current_password: str, new_password: str,
                        keep_session_id: int | None = None, now: datetime | None = None) -> None:
    """A person changes their own password (needs the current one). Other sessions of theirs end."""
    now = _now(now)
    with UnitOfWork(engine) as uow:
        user = repo.user_by_id(uow.session, actor.user_id)
        if user is None or not user.active:
            raise Forbidden("this account is disabled")
        if not verify_password(user.password_hash, current_password):
            msg = "the current password is not right"
            raise InvalidInput(msg, fields=[FieldProblem("current_password", msg)])
        check_password_policy(new_password, username=user.username, printed_name=user.printed_name,
                              field="new_password")
        if verify_password(user.password_hash, new_password):
            msg = "the new password must differ from the current one"
            raise InvalidInput(msg, fields=[FieldProblem("new_password", msg)])
        repo.update_user(uow.session, user.id, password_hash=hash_password(new_password), password_changed_at=now,
                         must_change_password=False)
        ended = repo.end_user_sessions(uow.session, user.id, now=now, reason="password-changed",
                                       except_id=keep_session_id)
        append_event(uow.session, actor=actor, action="user.password-changed", record_type="user", record_id=user.id,
                     new={"must_change_password": False, "other_sessions_ended": ended}, at=now)
        uow.commit()


def list_people(engine: Engine, *, now: datetime | None = None) -> list[Person]:
    now = _now(now)
    with UnitOfWork(engine, write=False) as uow:
        return [_person(u, now) for u in repo.list_users(uow.session)]


def recent_attempts(engine: Engine, *, limit: int = 50) -> list[dict[str, object]]:
    """The latest sign-in and signature attempts, for administrators (misuse reporting, 11.300(d))."""
    with UnitOfWork(engine, write=False) as uow:
        return repo.recent_attempts(uow.session, limit=limit)
