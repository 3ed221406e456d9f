"""Random secrets and their stored forms: session ids, CSRF tokens, API client tokens.

Only hashes of session ids and API tokens are stored (SHA-256 of a 256-bit random value: a
fast hash is right for high-entropy secrets, OWASP ASVS 3.2 and 2.9). The CSRF token is the
HMAC-SHA256 of the session id under the server's secret key, so it is per session, dies with
the session, and needs no storage (OWASP CSRF Cheat Sheet, "synchronizer token" / HMAC variant).
"""

from __future__ import annotations

import hashlib
import hmac
import secrets
from dataclasses import dataclass

TOKEN_PREFIX = "bgt"


def new_session_id() -> str:
    """A fresh 256-bit session id (URL-safe text), never derived from anything else."""
    return secrets.token_urlsafe(32)


def digest(secret: str) -> str:
    """SHA-256 hex digest of a high-entropy secret; what the database keeps."""
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def csrf_token(session_id: str, secret_key: str) -> str:
    """The per-session CSRF token."""
    mac = hmac.new(secret_key.encode("utf-8"), b"csrf:" + session_id.encode("utf-8"), hashlib.sha256)
    return mac.hexdigest()


def csrf_matches(session_id: str, secret_key: str, offered: str | None) -> bool:
    """Constant-time check of an offered CSRF token against the session's."""
    if not offered:
        return False
    return hmac.compare_digest(csrf_token(session_id, secret_key), offered)


@dataclass(frozen=True, kw_only=True)
class NewToken:
    """A freshly made API token: ``token`` is shown once; ``prefix`` and ``hash`` are stored."""

    token: str
    prefix: str
    hash: str


def new_api_token() -> NewToken:
    """``bgt_<8 hex prefix>_<43 url-safe characters>``; the prefix helps people tell tokens apart."""
    prefix = secrets.token_hex(4)
    token = f"{TOKEN_PREFIX}_{prefix}_{secrets.token_urlsafe(32)}"
    return NewToken(token=token, prefix=prefix, hash=digest(token))


def looks_like_api_token(value: str) -> bool:
    parts = value.split("_", 2)
    return len(parts) == 3 and parts[0] == TOKEN_PREFIX and len(parts[1]) == 8 and len(parts[2]) >= 32
