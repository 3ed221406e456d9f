"""Typed errors shared by every layer. They know nothing of HTTP: `service.web.errors` maps them.

Each error carries a stable `code` (the last part of the problem `type` URI), a message that says
what is wrong and what to do, and, for validation, a list of field problems.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class FieldProblem:
    """One wrong field: a path such as ``required_bands[2].from`` and what to do about it."""

    path: str
    message: str

    def as_dict(self) -> dict[str, str]:
        return {"path": self.path, "message": self.message}


class BandgateError(Exception):
    code = "error"
    title = "Request could not be completed"

    def __init__(self, message: str, *, fields: list[FieldProblem] | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.fields = list(fields or [])


class UnusableInput(BandgateError):
    """Input that cannot be read at all (malformed file, wrong format)."""

    code = "unusable-input"
    title = "Input cannot be read"


class InvalidInput(BandgateError):
    """Well-formed input with wrong values; `fields` names each one."""

    code = "invalid-input"
    title = "Input is not valid"


class NotFound(BandgateError):
    code = "not-found"
    title = "Not found"


class Conflict(BandgateError):
    code = "conflict"
    title = "Conflicts with the current state"


class NotAuthenticated(BandgateError):
    code = "not-authenticated"
    title = "Authentication required"


class Forbidden(BandgateError):
    code = "forbidden"
    title = "Not allowed"


class PayloadTooLarge(BandgateError):
    code = "payload-too-large"
    title = "Upload too large"


class UnsupportedMediaType(BandgateError):
    code = "unsupported-media-type"
    title = "Unsupported content type"


class ServiceUnavailable(BandgateError):
    code = "unavailable"
    title = "Service not ready"
