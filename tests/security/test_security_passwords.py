"""Password policy and argon2id hashing.

Sources: OWASP Password Storage Cheat Sheet (argon2id, m=19456 KiB, t=2, p=1 minimum);
NIST SP 800-63B §5.1.1.2 (length, no composition rules, no truncation, blocklist).
"""

from __future__ import annotations

import pytest

from service.security import (
    MAX_LENGTH,
    MIN_LENGTH,
    PasswordRefused,
    check_password_policy,
    hash_parameters,
    hash_password,
    needs_rehash,
    verify_password,
)
from service.security.common_passwords import common_passwords, is_common


def test_stored_hash_meets_the_owasp_argon2id_minimum() -> None:
    params = hash_parameters(hash_password("violet lantern ferry"))
    assert params.variant == "argon2id"
    assert params.memory_kib >= 19456 and params.time_cost >= 2 and params.parallelism >= 1  # OWASP cheat sheet
    assert params.salt_len >= 16 and params.meets_owasp_minimum


def test_hash_verifies_and_each_hash_is_salted() -> None:
    a, b = hash_password("violet lantern ferry"), hash_password("violet lantern ferry")
    assert a != b
    assert verify_password(a, "violet lantern ferry") and not verify_password(a, "violet lantern ferrY")
    assert not verify_password(None, "anything") and not verify_password("not-a-hash", "x")
    assert not needs_rehash(a)


@pytest.mark.parametrize("pw", ["a" * 3 + "short pw", "elevenchars"])
def test_too_short_is_refused_with_the_rule(pw: str) -> None:
    with pytest.raises(PasswordRefused, match="at least 12") as err:
        check_password_policy(pw)
    assert err.value.fields[0].path == "password"


def test_length_bounds_are_inclusive_and_nothing_is_truncated() -> None:
    check_password_policy("tangerine ox" )  # exactly 12
    long = "river stone " * 10 + "heron12!"  # 128 characters
    assert len(long) == MAX_LENGTH
    check_password_policy(long)
    with pytest.raises(PasswordRefused, match="at most 128"):
        check_password_policy(long + "x")
    # No truncation: a password differing only in its last character does not verify.
    h = hash_password(long)
    assert not verify_password(h, long[:-1] + "?")
    assert MIN_LENGTH == 12


def test_no_composition_rules_spaces_and_unicode_allowed() -> None:
    for pw in ["all lowercase words here", "ÄÖÜ ßtraße wörter", "漢字のパスワードです長い", "            x"]:
        check_password_policy(pw)


def test_common_passwords_are_refused() -> None:
    # From the bundled list (Django CommonPasswordValidator list) and the generated long patterns.
    for pw in ["password1234", "qwertyuiop123", "Password2024!", "1234567890123", "abcabcabcabc", "iloveyou1234"]:
        assert is_common(pw), pw
        with pytest.raises(PasswordRefused, match="commonly used"):
            check_password_policy(pw)
    assert len(common_passwords()) > 19000


def test_username_as_password_is_refused() -> None:
    with pytest.raises(PasswordRefused, match="username"):
        check_password_policy("maria.lindqvist", username="maria.lindqvist")


def test_length_rule_holds_for_any_text() -> None:
    """Property (NIST SP 800-63B §5.1.1.2): the only rules are length, the blocklist and the user's own
    names; any other text of 12-128 characters is accepted, whatever it is made of."""
    import unicodedata

    from hypothesis import given, settings, strategies as st

    @settings(max_examples=300, deadline=None)
    @given(st.text(min_size=0, max_size=140))
    def check(pw: str) -> None:
        n = len(unicodedata.normalize("NFKC", pw))
        try:
            check_password_policy(pw)
            accepted = True
        except PasswordRefused as exc:
            accepted = False
            assert exc.fields and exc.fields[0].path == "password"
        if n < MIN_LENGTH or n > MAX_LENGTH:
            assert not accepted
        elif not is_common(pw) and unicodedata.normalize("NFKC", pw).strip():
            assert accepted

    check()
