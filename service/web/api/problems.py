"""OpenAPI declarations of the problem responses each endpoint can give (RFC 9457)."""

from __future__ import annotations

from typing import Any

from service.web.api.schemas import Problem
from service.web.errors import PROBLEM_BASE

_TEXT = {
    400: ("bad-request", "The request could not be parsed"),
    401: ("not-authenticated", "No valid bearer token"),
    403: ("access-denied", "The token's scopes do not allow this"),
    404: ("not-found", "No such record"),
    409: ("conflict", "Conflicts with the record's current state, or the same Idempotency-Key is in flight"),
    413: ("payload-too-large", "The body is larger than the configured upload limit"),
    415: ("unsupported-media-type", "The Content-Type is not the one this endpoint takes"),
    422: ("invalid-input", "A field is missing or wrong (see `errors` for the field paths), a file cannot "
          "be read, or the Idempotency-Key was used for a different request"),
}


def problems(*codes: int) -> dict[int | str, dict[str, Any]]:
    out: dict[int | str, dict[str, Any]] = {}
    for code in (401, 403, *codes):
        slug, text = _TEXT[code]
        out[code] = {
            "description": text,
            "model": Problem,
            "content": {"application/problem+json": {"example": {
                "type": PROBLEM_BASE + slug, "title": text, "status": code, "detail": text.lower(),
            }}},
        }
    return out


WRITE = (409, 413, 415, 422)
