"""What every page handler shares: who is signed in, rendering, form errors, redirects, tones.

The sign-in state comes from the security layer (server-side sessions, CSRF tokens, password
re-entry at signing); this module only adapts it for the pages, so the handlers stay short.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime, timezone
from typing import Any
from urllib.parse import quote

from fastapi import FastAPI, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from service.errors import BandgateError, Forbidden

CAUTION_SHORT = ("A computed result is advice to the quality unit; local procedures govern every decision.")


@dataclass(frozen=True, kw_only=True)
class Person:
    """The person behind a page request, as the pages need them."""

    user_id: int
    username: str
    printed_name: str
    roles: frozenset[str]
    csrf_token: str = ""
    may: frozenset[str] = field(default_factory=frozenset)  # action names this person may take


class LoginNeeded(Exception):
    """No live session: the browser is sent to the sign-in page and back afterwards."""


# --- tones: the shape + colour that goes with a state's words (see macros.badge) --------------

LOT_TONES = {
    "quarantine": "hold",
    "testing": "wait",
    "awaiting_review": "bad",
    "awaiting_disposition": "wait",
    "released": "ok",
    "rejected": "bad",
}
VERDICT_TONES = {"pass": "ok", "fail": "bad", "invalid": "warn", None: "none"}
VERDICT_WORDS = {"pass": "conforms to the specification", "fail": "does not conform",
                 "invalid": "cannot be judged — measure again", None: "no result"}
OUTCOME_TONES = {"pass": "ok", "passed": "ok", "fail": "bad", "failed": "bad", "warn": "warn",
                 "untested": "none"}


def tone(kind: str, value: Any) -> str:
    table = {"lot": LOT_TONES, "verdict": VERDICT_TONES, "outcome": OUTCOME_TONES}[kind]
    return table.get(value, "none")


def age(value: datetime | date | None, now: datetime | None = None) -> str:
    """A short, plain age: '3 h', '2 days'."""
    if value is None:
        return "—"
    now = now or datetime.now(timezone.utc)
    if not isinstance(value, datetime):
        value = datetime(value.year, value.month, value.day, tzinfo=timezone.utc)
    if value.tzinfo is None:
        value = value.replace(tzinfo=timezone.utc)
    seconds = max(0.0, (now - value).total_seconds())
    if seconds < 3600:
        return f"{int(seconds // 60)} min"
    if seconds < 2 * 86400:
        return f"{int(seconds // 3600)} h"
    return f"{int(seconds // 86400)} days"


def compact_json(value: Any) -> str:
    """JSON for reading (not for scripts): unescaped text; the template's autoescape makes it safe."""
    import json

    return json.dumps(value, ensure_ascii=False, default=str)


def utc_text(value: datetime | None) -> str:
    if value is None:
        return "—"
    if value.tzinfo is None:
        value = value.replace(tzinfo=timezone.utc)
    return value.astimezone(timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")


# --- sign-in ------------------------------------------------------------------------------------

def current_person(request: Request) -> Person | None:
    from service.web.pages import _auth

    return _auth.person_for(request)


def need(request: Request, action: str) -> Person:
    """The signed-in person, if they may take ``action``; else sign-in page or a 403 page."""
    person = current_person(request)
    if person is None:
        raise LoginNeeded()
    from service.web.pages import _auth

    if not _auth.may(person, action):
        raise Forbidden(
            f"your role ({', '.join(sorted(person.roles)) or 'none'}) does not allow this "
            f"({action.replace('_', ' ')}); ask a person with that authority"
        )
    return person


# --- rendering ----------------------------------------------------------------------------------

def render(request: Request, template: str, context: dict[str, Any] | None = None, *,
           status: int = 200, person: Person | None = None, nav: str = "") -> HTMLResponse:
    ctx: dict[str, Any] = dict(context or {})
    if person is None and "person" not in ctx:
        try:
            person = current_person(request)
        except Exception:  # noqa: BLE001 - an error page must render even if sessions fail
            person = None
    ctx.setdefault("person", person)
    ctx.setdefault("csrf_token", person.csrf_token if person else "")
    ctx.setdefault("nav", nav)
    ctx.setdefault("errors", {})
    ctx.setdefault("values", {})
    ctx.setdefault("now_utc", datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M"))
    templates = request.app.state.templates
    return templates.TemplateResponse(request, template, ctx, status_code=status)


def see_other(url: str) -> RedirectResponse:
    """After a successful POST: go to the result (303, so a reload does not post again)."""
    return RedirectResponse(url, status_code=303)


def form_errors(exc: BandgateError, *, known: tuple[str, ...] = ()) -> dict[str, str]:
    """Field name → message for the fields an error names; the rest under ``_form``."""
    out: dict[str, str] = {}
    for f in exc.fields:
        key = f.path.split(".")[0].split("[")[0]
        if known and key not in known:
            key = "_form"
        text = f.message if f.message else exc.message
        out[key] = f"{out[key]}; {text}" if key in out else text
    if not out:
        out["_form"] = exc.message
    return out


def install(app: FastAPI) -> None:
    templates = app.state.templates
    def page_person(request: Request) -> Person | None:
        try:
            return current_person(request)
        except Exception:  # noqa: BLE001 - an error page must render even if the session store fails
            return None

    templates.env.globals.update(caution_short=CAUTION_SHORT, tone=tone, age=age, utc_text=utc_text,
                                 page_person=page_person,
                                 utc_now_text=lambda: datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M"))
    templates.env.filters.update(age=age, utc=utc_text, compact_json=compact_json)

    @app.exception_handler(LoginNeeded)
    async def _login_needed(request: Request, exc: LoginNeeded) -> Response:
        target = request.url.path + (f"?{request.url.query}" if request.url.query else "")
        if request.method != "GET":
            target = "/"
        return RedirectResponse(f"/login?next={quote(target, safe='')}", status_code=303)
