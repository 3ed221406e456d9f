"""The signing step shared by every signed decision: the meaning first, then the password.

21 CFR 11.50 / 11.200: the page states what the signature means before it asks for the password;
the password (and the user id when the session has not signed before) is checked by the security
layer, which also throttles and audits refusals. The records use case writes the signature.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

from fastapi import Request
from fastapi.responses import HTMLResponse

from service.errors import BandgateError
from service.web.pages import _auth
from service.web.pages._base import Person, form_errors, render

SIGN_FIELDS = ("reason", "username", "password")


@dataclass(frozen=True, kw_only=True)
class Signing:
    """What is about to be signed, in words, and how."""

    action: str  # permission action: sign_review | sign_disposition | sign_approval
    meaning: str  # approved | reviewed | invalidated | rejected | released
    record: str  # "lot L-2026-0004", "specification MAT-1 version 3"
    title: str  # page heading: "Reject lot L-2026-0004"
    post_to: str
    back_to: str
    reason_label: str = "Reason"
    reason_hint: str = ""
    reason_required: bool = True
    button: str = "Sign"
    hidden: tuple[tuple[str, str], ...] = ()

    @property
    def meaning_text(self) -> str:
        from service.release.signing import MEANING_TEXT, Meaning

        return MEANING_TEXT[Meaning(self.meaning)]


def page(request: Request, person: Person, signing: Signing, *, values: dict[str, Any] | None = None,
         errors: dict[str, str] | None = None, message: str = "", status: int = 200,
         extra: dict[str, Any] | None = None) -> HTMLResponse:
    ctx = {"signing": signing, "values": values or {}, "errors": errors or {}, "message": message,
           "ask_username": _auth.signing_needs_username(request), **(extra or {})}
    return render(request, "sign.html", ctx, status=status, person=person)


def sign(request: Request, person: Person, signing: Signing, form: dict[str, str],
         perform: Callable[[Any], Any], *, extra: dict[str, Any] | None = None) -> tuple[Any, HTMLResponse | None]:
    """Check the password and run ``perform(actor)``; on refusal, the sign page again with the message."""
    try:
        result = _auth.sign_with_password(request, person, action=signing.action,
                                          username=form.get("username"), password=form.get("password", ""),
                                          perform=perform)
    except BandgateError as exc:
        values = {k: v for k, v in form.items() if k not in ("password", "csrf_token")}
        return None, page(request, person, signing, values=values, errors=form_errors(exc, known=SIGN_FIELDS),
                          message=exc.message, status=_status(exc), extra=extra)
    return result, None


def _status(exc: BandgateError) -> int:
    from service.web.errors import status_for

    return status_for(exc)
