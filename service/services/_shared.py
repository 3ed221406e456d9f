"""Helpers shared by the use cases: lookups that raise NotFound, audit and signature writing, views."""

from __future__ import annotations

import json
from datetime import datetime
from typing import Any

from sqlalchemy.engine import Connection
from sqlmodel import Session

from service.errors import InvalidInput, NotFound, FieldProblem
from service.release.actor import Actor
from service.release.permissions import Action, check_may_sign_record
from service.release.signing import MEANING_TEXT, Meaning, meaning_allowed
from service.store import repositories as repo
from service.store.audit import append_event
from service.store.signed_content import digest_of
from service.store.tables import (
    Instrument, Lot, Material, Signature, SpecificationVersion, Supplier, utc_now,
)
from service.services.views import SignatureView, utc


def require_text(value: str | None, field: str, what: str, *, max_len: int = 200) -> str:
    text = (value or "").strip()
    if not text:
        raise InvalidInput(f"{what} is required", fields=[FieldProblem(field, f"give {what}")])
    if len(text) > max_len:
        raise InvalidInput(f"{what} is longer than {max_len} characters",
                           fields=[FieldProblem(field, f"shorten it to {max_len} characters or fewer")])
    return text


def material(session: Session, code: str) -> Material:
    row = repo.material_by_code(session, code)
    if row is None:
        raise NotFound(f"no material with code {code!r}; create it first or check the code")
    return row


def supplier(session: Session, name: str) -> Supplier:
    row = repo.supplier_by_name(session, name)
    if row is None:
        raise NotFound(f"no supplier named {name!r}; register the supplier first or check the name")
    return row


def no_instrument(code: str) -> NotFound:
    return NotFound(f"no instrument {code!r}; register it first or check the identifier")


def no_lot(code: str) -> NotFound:
    return NotFound(f"no lot with code {code!r}")


def instrument(session: Session, code: str) -> Instrument:
    row = repo.instrument_by_code(session, code)
    if row is None:
        raise no_instrument(code)
    return row


def lot(session: Session, code: str) -> Lot:
    row = repo.lot_by_code(session, code)
    if row is None:
        raise no_lot(code)
    return row


def spec(session: Session, spec_id: int) -> SpecificationVersion:
    row = repo.spec_by_id(session, spec_id)
    if row is None:
        raise NotFound(f"no specification version with id {spec_id}")
    return row


def audit(session: Session | Connection, actor: Actor, action: str, record_type: str, record_id: Any, *,
          old: dict[str, Any] | None = None, new: dict[str, Any] | None = None, reason: str = "") -> None:
    append_event(session, actor=actor, action=action, record_type=record_type, record_id=record_id,
                 old=old, new=new, reason=reason)


def sign(session: Session, actor: Actor, *, record_type: str, record_id: int, meaning: Meaning,
         reason: str, action: Action | None = None) -> Signature:
    """Sign the exact current content of a record (its digest is stored with the signature).

    The signer's roles must grant the signing action (``service.release.permissions``): checked
    here as well as at the page, so no caller can make a technician or an administrator sign.
    The password re-entry is checked before the use case runs (``security_signing.confirm_signer``).
    """
    if not meaning_allowed(record_type, meaning):
        raise InvalidInput(f"a {record_type.replace('_', ' ')} cannot be signed as '{meaning.value}'")
    check_may_sign_record(actor.roles, record_type=record_type, meaning=meaning.value, action=action)
    session.flush()
    sig = Signature(
        record_type=record_type, record_id=record_id, meaning=meaning.value, reason=reason,
        user_id=actor.user_id, username=actor.username, printed_name=actor.printed_name,
        signed_at=utc_now(), digest=digest_of(session, record_type, record_id),
    )
    repo.add(session, sig)
    audit(session, actor, "signature.created", "signature", sig.id, new=signature_values(sig), reason=reason)
    return sig


def signature_values(sig: Signature) -> dict[str, Any]:
    return {
        "record_type": sig.record_type, "record_id": sig.record_id, "meaning": sig.meaning, "reason": sig.reason,
        "user_id": sig.user_id, "username": sig.username, "printed_name": sig.printed_name,
        "signed_at": utc(sig.signed_at), "digest": sig.digest,
    }


def signature_view(sig: Signature) -> SignatureView:
    return SignatureView(
        id=sig.id or 0, record_type=sig.record_type, record_id=sig.record_id, meaning=sig.meaning,
        meaning_text=MEANING_TEXT.get(Meaning(sig.meaning), sig.meaning), reason=sig.reason,
        user_id=sig.user_id, username=sig.username, printed_name=sig.printed_name,
        signed_at=utc(sig.signed_at) or sig.signed_at, digest=sig.digest,
    )


def loads(text: str) -> Any:
    return json.loads(text)


def now() -> datetime:
    return utc_now()
