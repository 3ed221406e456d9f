"""The role × action and scope × action tables fail closed and keep the separations that matter."""

from __future__ import annotations

import itertools

import pytest

from service.release.permissions import (
    ROLE_ACTIONS,
    SCOPE_ACTIONS,
    SIGNING_ACTIONS,
    Action,
    Role,
    Scope,
    client_may,
    may_sign,
    person_may,
)

# The expected table, written out independently of the module (every role × every action).
EXPECTED: dict[str, set[str]] = {
    "technician": {"public", "own_account", "view_records", "receive_lot", "record_measurement",
                   "record_instrument_check", "dry_run_evaluation"},
    "supervisor": {"public", "own_account", "view_records", "view_audit", "dry_run_evaluation",
                   "record_instrument_check", "sign_review"},
    "quality": {"public", "own_account", "view_records", "view_audit", "dry_run_evaluation", "manage_methods",
                "sign_disposition", "sign_approval"},
    "administrator": {"public", "own_account", "view_records", "view_audit", "manage_users"},
}


@pytest.mark.parametrize("role,action", list(itertools.product(list(Role), list(Action))))
def test_every_role_against_every_action(role: Role, action: Action) -> None:
    assert person_may([role], action) == (action.value in EXPECTED[role.value])


def test_technician_and_administrator_cannot_sign_anything() -> None:
    for action in SIGNING_ACTIONS:
        assert not may_sign([Role.technician], action)
        assert not may_sign([Role.administrator], action)
    assert not (ROLE_ACTIONS[Role.administrator] & SIGNING_ACTIONS)


def test_no_scope_can_sign() -> None:
    for scope, action in itertools.product(list(Scope), SIGNING_ACTIONS):
        assert not client_may([scope], action)
    assert not any(acts & SIGNING_ACTIONS for acts in SCOPE_ACTIONS.values())


def test_unknown_names_and_empty_sets_grant_nothing() -> None:
    assert not person_may([], Action.view_records)
    assert not person_may(["root", "superuser"], Action.manage_users)
    assert not person_may(["quality"], "approve_everything")
    assert not client_may(["admin"], Action.view_records)
    assert not client_may([], Action.view_records)
    assert person_may([], Action.public)


def test_several_roles_combine() -> None:
    assert person_may(["technician", "quality"], Action.sign_disposition)
    assert person_may(["technician", "quality"], Action.receive_lot)
    assert may_sign(["administrator", "quality"], Action.sign_approval)


def test_scopes() -> None:
    assert client_may(["read"], Action.view_records) and not client_may(["read"], Action.receive_lot)
    assert client_may(["submit"], Action.record_measurement) and not client_may(["submit"], Action.manage_methods)
    assert client_may(["manage"], Action.manage_methods) and not client_may(["manage"], Action.manage_users)


def test_signing_map_per_record_and_meaning() -> None:
    from service.release.permissions import NotEntitledToSign, check_may_sign_record

    check_may_sign_record(["quality"], record_type="lot", meaning="released")
    check_may_sign_record(["reviewer"], record_type="lot", meaning="rejected", action=Action.sign_review)
    for roles, rt, meaning, action in [
        (["technician"], "lot", "released", None),
        (["administrator"], "specification_version", "approved", None),
        (["supervisor"], "lot", "rejected", Action.sign_disposition),  # QA's rejection is not the reviewer's
        (["quality"], "measurement", "invalidated", None),
        (["quality"], "lot", "blessed", None),  # unknown meaning: closed
    ]:
        with pytest.raises(NotEntitledToSign):
            check_may_sign_record(roles, record_type=rt, meaning=meaning, action=action)
