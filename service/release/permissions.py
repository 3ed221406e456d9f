"""Who may do what: the role × action table and the scope × action table, failing closed.

Pure: no web, no database. Every page and API route declares exactly one `Action`
(see ``docs/security.md``); the web layer asks `person_may` / `client_may` before the route body
runs. Anything not written in these tables is refused: an unknown role, an unknown action, an
unknown scope, an empty role set.

Separation of duties that the tables make structural (21 CFR 211.194, 211.22; Annex 11 §12):

* the technician measures but signs nothing;
* the supervisor reviews failures and signs rejections and invalidations;
* the quality unit disposes of lots (release / reject) and approves specifications and references;
* the administrator manages people and clients and holds **no** signing action, so an
  administrator can never sign on anyone's behalf;
* an API client (a machine) never signs: no scope contains a signing action.

The per-record rule "the one who measured cannot review the same lot" depends on the record and
is enforced by the records layer's use cases, not here.
"""

from __future__ import annotations

from collections.abc import Iterable
from enum import Enum

from service.errors import Forbidden


class Role(str, Enum):
    """A person's role. A person may hold several."""

    technician = "technician"
    supervisor = "supervisor"
    quality = "quality"
    administrator = "administrator"


class Action(str, Enum):
    """What a route does, in plain words. A route declares one."""

    # Open to everyone, signed in or not (login page, health checks, static files).
    public = "public"
    # Any signed-in person: own password, sign out, own account page.
    own_account = "own_account"
    # Read GMP records: work queue, lots, measurements, evaluations, materials, specs, instruments.
    view_records = "view_records"
    # Read the audit trail and its verification.
    view_audit = "view_audit"
    # Receive a lot (creates it in quarantine with its sampling plan).
    receive_lot = "receive_lot"
    # Upload a measurement (a spectrum) against a lot's container.
    record_measurement = "record_measurement"
    # Record an instrument's polystyrene check.
    record_instrument_check = "record_instrument_check"
    # Evaluate a spectrum without recording anything (method development dry run).
    dry_run_evaluation = "dry_run_evaluation"
    # Create and edit materials, suppliers, draft specifications, references, instruments.
    manage_methods = "manage_methods"
    # Signed: review a failed lot (reject it, or invalidate a measurement with a cause).
    sign_review = "sign_review"
    # Signed: quality disposition of a lot (release / reject).
    sign_disposition = "sign_disposition"
    # Signed: approve a specification version or a reference spectrum.
    sign_approval = "sign_approval"
    # People and API clients: create, disable, reset passwords, change roles, unlock.
    manage_users = "manage_users"


SIGNING_ACTIONS: frozenset[Action] = frozenset(
    {Action.sign_review, Action.sign_disposition, Action.sign_approval}
)

_READ = {Action.own_account, Action.view_records}

ROLE_ACTIONS: dict[Role, frozenset[Action]] = {
    Role.technician: frozenset(
        _READ
        | {
            Action.receive_lot,
            Action.record_measurement,
            Action.record_instrument_check,
            Action.dry_run_evaluation,
        }
    ),
    Role.supervisor: frozenset(
        _READ
        | {
            Action.view_audit,
            Action.dry_run_evaluation,
            Action.record_instrument_check,
            Action.sign_review,
        }
    ),
    Role.quality: frozenset(
        _READ
        | {
            Action.view_audit,
            Action.dry_run_evaluation,
            Action.manage_methods,
            Action.sign_disposition,
            Action.sign_approval,
        }
    ),
    Role.administrator: frozenset(_READ | {Action.view_audit, Action.manage_users}),
}


class Scope(str, Enum):
    """What an API client's token may do. No scope lets a token sign."""

    read = "read"
    submit = "submit"
    manage = "manage"


SCOPE_ACTIONS: dict[Scope, frozenset[Action]] = {
    Scope.read: frozenset({Action.view_records, Action.view_audit}),
    Scope.submit: frozenset(
        {
            Action.receive_lot,
            Action.record_measurement,
            Action.record_instrument_check,
            Action.dry_run_evaluation,
        }
    ),
    Scope.manage: frozenset({Action.manage_methods, Action.record_instrument_check}),
}


# Other names for a role, accepted when reading stored roles (the trade says both).
ROLE_ALIASES: dict[str, Role] = {"reviewer": Role.supervisor}


def _known(enum: type[Enum], values: Iterable[str]) -> list[Enum]:
    out = []
    for v in values:
        if enum is Role and v in ROLE_ALIASES:
            out.append(ROLE_ALIASES[v])
            continue
        try:
            out.append(enum(v))
        except ValueError:
            continue  # an unknown name grants nothing
    return out


def parse_roles(values: Iterable[str]) -> frozenset[Role]:
    """Roles from stored names; unknown names are dropped (they grant nothing)."""
    return frozenset(_known(Role, values))  # type: ignore[arg-type]


def parse_scopes(values: Iterable[str]) -> frozenset[Scope]:
    """Scopes from stored names; unknown names are dropped (they grant nothing)."""
    return frozenset(_known(Scope, values))  # type: ignore[arg-type]


def _action(action: Action | str) -> Action | None:
    try:
        return Action(action)
    except ValueError:
        return None


def person_may(roles: Iterable[Role | str], action: Action | str) -> bool:
    """True when one of ``roles`` grants ``action``. Unknown roles/actions and no roles: False.

    `Action.public` is true for everyone; `Action.own_account` for anyone with at least one
    known role (a person with no role has no business being signed in).
    """
    act = _action(action)
    if act is None:
        return False
    if act is Action.public:
        return True
    known = parse_roles(str(getattr(r, "value", r)) for r in roles)
    return any(act in ROLE_ACTIONS.get(role, frozenset()) for role in known)


def client_may(scopes: Iterable[Scope | str], action: Action | str) -> bool:
    """True when one of ``scopes`` grants ``action``. Signing actions are never granted."""
    act = _action(action)
    if act is None or act in SIGNING_ACTIONS:
        return False
    if act is Action.public:
        return True
    known = parse_scopes(str(getattr(s, "value", s)) for s in scopes)
    return any(act in SCOPE_ACTIONS.get(scope, frozenset()) for scope in known)


def may_sign(roles: Iterable[Role | str], action: Action | str) -> bool:
    """True when ``action`` is a signing action and one of ``roles`` grants it."""
    act = _action(action)
    return act in SIGNING_ACTIONS and person_may(roles, act)  # type: ignore[arg-type]


# Which signing action may give which signature meaning to which record (records layer's meanings).
SIGNING_FOR: dict[tuple[str, str], frozenset[Action]] = {
    ("specification_version", "approved"): frozenset({Action.sign_approval}),
    ("reference_spectrum", "approved"): frozenset({Action.sign_approval}),
    ("measurement", "invalidated"): frozenset({Action.sign_review}),
    ("measurement", "reviewed"): frozenset({Action.sign_review}),
    ("lot", "reviewed"): frozenset({Action.sign_review}),
    ("lot", "rejected"): frozenset({Action.sign_review, Action.sign_disposition}),
    ("lot", "released"): frozenset({Action.sign_disposition}),
}


class NotEntitledToSign(Forbidden):
    """The signer's roles do not include the signing action this signature needs."""

    code = "not-entitled-to-sign"
    title = "Not entitled to sign"


def check_may_sign_record(roles: Iterable[Role | str], *, record_type: str, meaning: str,
                          action: Action | None = None) -> None:
    """Raise `NotEntitledToSign` unless ``roles`` may give ``meaning`` to a ``record_type``.

    ``action`` narrows the check to one signing action (e.g. a QA rejection needs
    `Action.sign_disposition`, a review rejection `Action.sign_review`). Unknown pairs fail closed.
    """
    roles = list(roles)
    allowed = SIGNING_FOR.get((record_type, str(getattr(meaning, "value", meaning))), frozenset())
    if action is not None:
        allowed = allowed & {Action(action)}
    if not any(may_sign(roles, a) for a in allowed):
        names = ", ".join(sorted(str(getattr(r, "value", r)) for r in roles)) or "none"
        raise NotEntitledToSign(
            f"your roles ({names}) do not allow signing a {record_type.replace('_', ' ')} as "
            f"'{getattr(meaning, 'value', meaning)}'")


__all__ = [
    "Action",
    "NotEntitledToSign",
    "ROLE_ACTIONS",
    "ROLE_ALIASES",
    "SIGNING_FOR",
    "Role",
    "SCOPE_ACTIONS",
    "SIGNING_ACTIONS",
    "Scope",
    "check_may_sign_record",
    "client_may",
    "may_sign",
    "parse_roles",
    "parse_scopes",
    "person_may",
]
