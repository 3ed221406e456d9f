"""Electronic signature verification: the gate every signing use case passes through.

21 CFR 11.200(a): a signature is made of two components, user id and password. The first
signature in a continuous session needs both; later signatures in the same session need at
least the password. 11.100(a) / 11.300: a signature is the signer's own, never made for anyone
else. The role table says which roles may give which signing action; an administrator holds no
signing action, and a technician signs nothing.

Use:

    actor = confirm_signer(engine, signed_in=..., username=form_user_id, password=form_password,
                           action=Action.sign_disposition, address=client_ip)
    decide_lot(engine, actor=actor, ...)        # the records use case that writes the signature

or ``sign_with_password(..., perform=lambda actor: decide_lot(engine, actor=actor, ...))``.
A refusal raises `SignatureRefused` after recording the attempt and writing an audit event.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import TypeVar

from sqlalchemy.engine import Engine

from service.errors import FieldProblem, Forbidden
from service.release.actor import Actor
from service.release.permissions import Action, may_sign
from service.security.throttle import ThrottlePolicy
from service.services.security_credentials import Attempt, CredentialsRefused, check_credentials, utc_now
from service.services.security_sessions import SignedIn
from service.store import security as repo
from service.store.audit import append_event
from service.store.unit_of_work import UnitOfWork

T = TypeVar("T")


class SignatureRefused(Forbidden):
    """The signature was not accepted; nothing was signed. ``retry_after`` when throttled."""

    code = "signature-refused"
    title = "Signature not accepted"

    def __init__(self, message: str, *, fields: list[FieldProblem] | None = None, retry_after: int = 0) -> None:
        super().__init__(message, fields=fields)
        self.retry_after = retry_after


def _audit_refusal(engine: Engine, *, actor: Actor, action: Action, why: str, now: datetime,
                   extra: dict[str, object] | None = None) -> None:
    with UnitOfWork(engine) as uow:
        append_event(uow.session, actor=actor, action="user.signature-refused", record_type="user",
                     record_id=actor.user_id, new={"signing_action": action.value, **(extra or {})},
                     reason=why, at=now)
        uow.commit()


def confirm_signer(engine: Engine, *, signed_in: SignedIn, username: str | None, password: str,
                   action: Action, address: str, now: datetime | None = None,
                   policy: ThrottlePolicy = ThrottlePolicy()) -> Actor:
    """Return the signer (always the signed-in person) once the signature components check out."""
    now = now or utc_now()
    actor = signed_in.actor
    if not may_sign(actor.roles, action):
        why = (f"your roles ({', '.join(sorted(actor.roles)) or 'none'}) do not allow this signature "
               f"({action.value.replace('_', ' ')})")
        _audit_refusal(engine, actor=actor, action=action, why=why, now=now)
        raise SignatureRefused(why)
    if signed_in.must_change_password:
        why = "your password was reset: choose a new password (Account → Password) before signing anything"
        _audit_refusal(engine, actor=actor, action=action, why=why, now=now)
        raise SignatureRefused(why)
    entered = (username or "").strip().lower()
    if not signed_in.signed_once and not entered:
        msg = "the first signature in a session needs both your user id and your password"
        raise SignatureRefused(msg, fields=[FieldProblem("username", msg)])
    if entered and entered != actor.username.lower():
        why = "a signature is always your own: enter your own user id, never another person's"
        _audit_refusal(engine, actor=actor, action=action, why=why, now=now,
                       extra={"user_id_entered": entered[:64]})
        raise SignatureRefused(why, fields=[FieldProblem("username", why)])
    if not password:
        msg = "enter your password to sign"
        raise SignatureRefused(msg, fields=[FieldProblem("password", msg)])

    def _mark(uow: UnitOfWork, _user: repo.UserRow) -> None:
        repo.mark_signed(uow.session, signed_in.session_row_id)

    try:
        check_credentials(engine, Attempt(kind="signature", username=actor.username, password=password,
                                          address=address, now=now), policy=policy, within=_mark)
    except CredentialsRefused as exc:
        msg = "the password is not right; nothing was signed" if not exc.retry_after and not exc.locked \
            else f"{exc.message}; nothing was signed"
        raise SignatureRefused(msg, fields=[FieldProblem("password", msg)], retry_after=exc.retry_after) from None
    return actor


def sign_with_password(engine: Engine, *, signed_in: SignedIn, username: str | None, password: str,
                       action: Action, address: str, perform: Callable[[Actor], T],
                       now: datetime | None = None) -> T:
    """Confirm the signer, then run ``perform(actor)`` (the records use case that signs)."""
    actor = confirm_signer(engine, signed_in=signed_in, username=username, password=password, action=action,
                           address=address, now=now)
    return perform(actor)
