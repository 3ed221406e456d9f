"""Password policy and argon2id hashing (OWASP ASVS 4.0 §2.1 and §2.4; OWASP Password Storage Cheat Sheet).

Policy (NIST SP 800-63B §5.1.1.2, OWASP ASVS V2.1): 12 to 128 characters counted after Unicode
NFKC normalisation; every character allowed, spaces included; no composition rules; never
truncated (the whole normalised password is hashed); refused when it is a common password, or
the user's own username or printed name.

Hashing: argon2id with at least the OWASP minimum m = 19456 KiB (19 MiB), t = 2, p = 1
(OWASP Password Storage Cheat Sheet, "Argon2id"). A stored hash with weaker parameters is
re-hashed at the next successful sign-in.
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass

from argon2 import PasswordHasher, Type, extract_parameters
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError

from service.errors import FieldProblem, InvalidInput
from service.security.common_passwords import is_common

MIN_LENGTH = 12
MAX_LENGTH = 128

# OWASP minimum for argon2id; ours meets it exactly by default (stronger is allowed).
OWASP_MIN_MEMORY_KIB = 19456
OWASP_MIN_TIME_COST = 2
OWASP_MIN_PARALLELISM = 1


@dataclass(frozen=True, kw_only=True)
class HashParameters:
    """The argon2 parameters read back from a stored hash."""

    variant: str
    memory_kib: int
    time_cost: int
    parallelism: int
    hash_len: int
    salt_len: int

    @property
    def meets_owasp_minimum(self) -> bool:
        return (
            self.variant == "argon2id"
            and self.memory_kib >= OWASP_MIN_MEMORY_KIB
            and self.time_cost >= OWASP_MIN_TIME_COST
            and self.parallelism >= OWASP_MIN_PARALLELISM
        )


_HASHER = PasswordHasher(
    time_cost=OWASP_MIN_TIME_COST,
    memory_cost=OWASP_MIN_MEMORY_KIB,
    parallelism=OWASP_MIN_PARALLELISM,
    hash_len=32,
    salt_len=16,
    type=Type.ID,
)


class PasswordRefused(InvalidInput):
    """The chosen password breaks the policy; the message says which rule and what to do."""

    code = "password-refused"
    title = "Password not accepted"


def _normalise(password: str) -> str:
    return unicodedata.normalize("NFKC", password)


def check_password_policy(password: str, *, username: str = "", printed_name: str = "",
                          field: str = "password") -> None:
    """Raise `PasswordRefused` naming the broken rule; return None when the password is acceptable."""
    p = _normalise(password)
    problem = None
    if len(p) < MIN_LENGTH:
        problem = (f"the password has {len(p)} characters; use at least {MIN_LENGTH} "
                   "(a few unrelated words make a long password that is easy to remember)")
    elif len(p) > MAX_LENGTH:
        problem = f"the password has {len(p)} characters; use at most {MAX_LENGTH}"
    elif p.strip() == "":
        problem = "the password is only spaces; choose one with real characters"
    elif is_common(p):
        problem = "this password is on the list of commonly used passwords; choose another"
    else:
        low = p.casefold()
        for label, value in (("username", username), ("printed name", printed_name)):
            if value and low == _normalise(value).casefold():
                problem = f"the password may not be your {label}; choose another"
                break
    if problem:
        raise PasswordRefused(problem, fields=[FieldProblem(field, problem)])


def hash_password(password: str) -> str:
    """The argon2id hash (PHC string) of the NFKC-normalised password."""
    return _HASHER.hash(_normalise(password))


def verify_password(stored_hash: str | None, password: str) -> bool:
    """True when ``password`` matches ``stored_hash``. A missing or malformed hash never matches."""
    if not stored_hash:
        # Spend the same effort as a real check so a missing account does not answer faster.
        _HASHER.hash("timing-equaliser")
        return False
    try:
        return _HASHER.verify(stored_hash, _normalise(password))
    except (VerifyMismatchError, VerificationError, InvalidHashError):
        return False


def dummy_verify() -> None:
    """Spend the time of one verification (used when the account does not exist)."""
    verify_password(None, "")


def needs_rehash(stored_hash: str) -> bool:
    """True when the hash was made with parameters other than the current ones."""
    try:
        return _HASHER.check_needs_rehash(stored_hash)
    except InvalidHashError:
        return True


def hash_parameters(stored_hash: str) -> HashParameters:
    """Read the argon2 parameters back from a stored PHC hash string."""
    params = extract_parameters(stored_hash)
    return HashParameters(
        variant={Type.ID: "argon2id", Type.I: "argon2i", Type.D: "argon2d"}[params.type],
        memory_kib=params.memory_cost,
        time_cost=params.time_cost,
        parallelism=params.parallelism,
        hash_len=params.hash_len,
        salt_len=params.salt_len,
    )
