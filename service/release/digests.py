"""Canonical JSON and SHA-256 digests of records and audit events.

A record digest is SHA-256 over a canonical JSON text (keys sorted, no insignificant
whitespace, UTF-8, no NaN) of exactly the content that was signed, so that a signature cannot be
moved to another record (21 CFR 11.70) and any later change to the record shows as a mismatch.
"""

from __future__ import annotations

import hashlib
import json
from datetime import date, datetime, timezone
from decimal import Decimal
from enum import Enum
from typing import Any

GENESIS_HASH = "0" * 64


def _default(value: Any) -> Any:
    if isinstance(value, datetime):
        if value.tzinfo is None:
            value = value.replace(tzinfo=timezone.utc)
        return value.astimezone(timezone.utc).isoformat(timespec="microseconds")
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, Enum):
        return value.value
    if isinstance(value, Decimal):
        return str(value)
    if isinstance(value, (bytes, bytearray)):
        return hashlib.sha256(value).hexdigest()
    if isinstance(value, (set, frozenset)):
        return sorted(value)
    raise TypeError(f"cannot put a {type(value).__name__} into a record digest")


def canonical_json(value: Any) -> str:
    """The canonical text of ``value``: sorted keys, compact separators, no NaN/Infinity."""
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False, default=_default)


def sha256_hex(data: bytes | str) -> str:
    if isinstance(data, str):
        data = data.encode("utf-8")
    return hashlib.sha256(data).hexdigest()


def record_digest(record_type: str, content: dict[str, Any]) -> str:
    """SHA-256 of the canonical JSON of ``{"record_type": ..., "content": ...}``."""
    return sha256_hex(canonical_json({"record_type": record_type, "content": content}))


def event_hash(*, prev_hash: str, fields: dict[str, Any]) -> str:
    """The hash of one audit event: SHA-256 over the previous hash and the event's canonical fields."""
    return sha256_hex(canonical_json({"prev": prev_hash, "event": fields}))
