"""Security primitives without the web or the database: password policy and hashing, common
passwords, random tokens and their stored digests, CSRF tokens, throttling and session rules.

The use cases that store and audit these live in ``service/services/security_*.py``; the tables in
``service/store/security.py``; the web side in ``service/web/auth.py``.
"""

from service.security.passwords import (
    MAX_LENGTH,
    MIN_LENGTH,
    HashParameters,
    PasswordRefused,
    check_password_policy,
    dummy_verify,
    hash_parameters,
    hash_password,
    needs_rehash,
    verify_password,
)
from service.security.session_rules import SessionRules, end_reason
from service.security.throttle import ThrottlePolicy, Verdict, account_verdict, address_verdict
from service.security.tokens import csrf_matches, csrf_token, digest, new_api_token, new_session_id

__all__ = [
    "HashParameters",
    "MAX_LENGTH",
    "MIN_LENGTH",
    "PasswordRefused",
    "SessionRules",
    "ThrottlePolicy",
    "Verdict",
    "account_verdict",
    "address_verdict",
    "check_password_policy",
    "csrf_matches",
    "csrf_token",
    "digest",
    "dummy_verify",
    "end_reason",
    "hash_parameters",
    "hash_password",
    "needs_rehash",
    "new_api_token",
    "new_session_id",
    "verify_password",
]
