"""Pages for signing in and out, choosing one's password, and administering people.

Every route declares its action (``docs/security.md``). Forms post with the session's CSRF
token; no GET changes anything.
"""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from service.errors import BandgateError
from service.release.permissions import Action, Role
from service.services import security_accounts as accounts
from service.services import security_clients as clients
from service.services.security_credentials import CredentialsRefused
from service.services.security_sessions import sign_in, sign_out
from service.web.auth import (
    SESSION_COOKIE,
    Principal,
    _origin_ok,
    clear_session_cookie,
    client_address,
    csrf_for,
    current_person,
    now_utc,
    require_action,
    set_session_cookie,
)

router = APIRouter(include_in_schema=False)


def _page(request: Request, name: str, context: dict[str, Any], status: int = 200) -> HTMLResponse:
    person = current_person(request)
    base = {"csrf": csrf_for(request), "person": person.actor if person else None}
    return request.app.state.templates.TemplateResponse(request, name, {**base, **context}, status_code=status)


def safe_next(value: str | None) -> str:
    """Only a local path may be the target after sign-in (no open redirect)."""
    if not value or not value.startswith("/") or value.startswith("//") or "\\" in value:
        return "/"
    return value


@router.get("/login", dependencies=[require_action(Action.public)])
def login_form(request: Request, next: str = "/") -> Response:
    if current_person(request) is not None:
        return RedirectResponse(safe_next(next), status_code=303)
    return _page(request, "login.html", {"next": safe_next(next), "error": None, "username": ""})


@router.post("/login", dependencies=[require_action(Action.public)])
async def login_submit(request: Request, username: str = Form(""), password: str = Form(""),
                       next: str = Form("/")) -> Response:
    target = safe_next(next)
    if not _origin_ok(request):
        return _page(request, "login.html", {"next": target, "username": username,
                                             "error": "this sign-in came from another site and was refused"}, 403)
    try:
        signed = await run_in_threadpool(
            sign_in, request.app.state.engine, username=username, password=password,
            address=client_address(request), user_agent=request.headers.get("user-agent", ""), now=now_utc(request))
    except CredentialsRefused as exc:
        status = 429 if exc.retry_after else 401
        response = _page(request, "login.html", {"next": target, "username": username[:64], "error": exc.message},
                         status)
        if exc.retry_after:
            response.headers["Retry-After"] = str(exc.retry_after)
        return response
    response = RedirectResponse("/account/password" if signed.must_change_password else target, status_code=303)
    set_session_cookie(request, response, signed.token)
    return response


@router.get("/logout", dependencies=[require_action(Action.own_account)])
def logout_form(request: Request) -> Response:
    return _page(request, "logout.html", {})


@router.post("/logout", dependencies=[require_action(Action.own_account)])
async def logout_submit(request: Request) -> Response:
    await run_in_threadpool(sign_out, request.app.state.engine, request.cookies.get(SESSION_COOKIE),
                            now=now_utc(request))
    response = RedirectResponse("/login", status_code=303)
    clear_session_cookie(request, response)
    return response


@router.get("/account/password", dependencies=[require_action(Action.own_account)])
def password_form(request: Request) -> Response:
    return _page(request, "account_password.html", {"errors": {}, "done": False})


@router.post("/account/password")
async def password_submit(request: Request, current_password: str = Form(""), new_password: str = Form(""),
                          repeat_password: str = Form(""),
                          who: Principal = require_action(Action.own_account)) -> Response:
    assert who.person is not None
    if new_password != repeat_password:
        return _page(request, "account_password.html",
                     {"errors": {"repeat_password": "the two new passwords differ; type the same one twice"},
                      "done": False}, 422)
    try:
        await run_in_threadpool(accounts.change_own_password, request.app.state.engine, actor=who.person.actor,
                                current_password=current_password, new_password=new_password,
                                keep_session_id=who.person.session_row_id, now=now_utc(request))
    except BandgateError as exc:
        errors = {f.path: f.message for f in exc.fields} or {"new_password": exc.message}
        return _page(request, "account_password.html", {"errors": errors, "done": False}, 422)
    if hasattr(request.state, "bandgate_person"):
        delattr(request.state, "bandgate_person")  # re-read: must_change_password is now off
    return _page(request, "account_password.html", {"errors": {}, "done": True})


# ----------------------------------------------------------------- administration

def _admin_context(request: Request) -> dict[str, Any]:
    engine = request.app.state.engine
    return {"people": accounts.list_people(engine, now=now_utc(request)),
            "attempts": accounts.recent_attempts(engine, limit=30),
            "clients": clients.list_clients(engine), "roles": [r.value for r in Role], "notice": None,
            "error": None}


@router.get("/admin/users", dependencies=[require_action(Action.manage_users)])
def users_page(request: Request) -> Response:
    return _page(request, "admin_users.html", _admin_context(request))


def _after(request: Request, notice: str | None = None, error: str | None = None, status: int = 200) -> Response:
    ctx = _admin_context(request)
    ctx.update(notice=notice, error=error)
    return _page(request, "admin_users.html", ctx, status)


@router.post("/admin/users")
async def users_create(request: Request, username: str = Form(""), printed_name: str = Form(""),
                       roles: list[str] = Form(default_factory=list), password: str = Form(""),
                       who: Principal = require_action(Action.manage_users)) -> Response:
    temporary = password or accounts.generate_temporary_password()
    try:
        person = await run_in_threadpool(accounts.create_user, request.app.state.engine, username=username,
                                         printed_name=printed_name, roles=roles, password=temporary,
                                         admin=who.actor, now=now_utc(request))
    except BandgateError as exc:
        return _after(request, error=exc.message, status=422)
    shown = "" if password else f" Temporary password (shown once): {temporary}"
    return _after(request, notice=f"Created {person.username} ({person.printed_name}); they must choose "
                                  f"their own password at first sign-in.{shown}")


@router.post("/admin/users/{username}/{operation}")
async def users_change(request: Request, username: str, operation: str, reason: str = Form(""),
                       roles: list[str] = Form(default_factory=list),
                       who: Principal = require_action(Action.manage_users)) -> Response:
    engine, now, admin = request.app.state.engine, now_utc(request), who.actor
    try:
        if operation == "disable":
            await run_in_threadpool(accounts.set_active, engine, username=username, active=False, reason=reason,
                                    admin=admin, now=now)
            notice = f"Disabled {username}; their sessions have ended."
        elif operation == "enable":
            await run_in_threadpool(accounts.set_active, engine, username=username, active=True, reason=reason,
                                    admin=admin, now=now)
            notice = f"Enabled {username}."
        elif operation == "reset-password":
            _, temporary = await run_in_threadpool(accounts.reset_password, engine, username=username,
                                                   reason=reason, admin=admin, now=now)
            notice = (f"Password of {username} reset; temporary password (shown once): {temporary}. "
                      "They must choose their own before anything else.")
        elif operation == "roles":
            await run_in_threadpool(accounts.set_roles, engine, username=username, roles=roles, reason=reason,
                                    admin=admin, now=now)
            notice = f"Roles of {username} changed; their sessions have ended."
        elif operation == "unlock":
            await run_in_threadpool(accounts.unlock, engine, username=username, reason=reason, admin=admin, now=now)
            notice = f"Unlocked {username}."
        else:
            return _after(request, error=f"unknown operation {operation!r}", status=404)
    except BandgateError as exc:
        return _after(request, error=exc.message, status=422 if exc.code != "not-found" else 404)
    return _after(request, notice=notice)
