"""Uploaded files: bytes, SHA-256 and the sent file name (metadata only, never a path)."""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from functools import cached_property

from fastapi import Request, UploadFile

from service import errors as e


@dataclass(frozen=True, kw_only=True)
class Upload:
    data: bytes
    file_name: str

    @cached_property
    def sha256(self) -> str:
        """SHA-256 of the bytes received (computed when first asked for)."""
        return hashlib.sha256(self.data).hexdigest()


def read_upload(file: UploadFile, request: Request, *, field: str = "file") -> Upload:
    """Read an uploaded part (already spooled to disk by the parser, within the body limit)."""
    limit = request.app.state.settings.max_upload_bytes
    data = file.file.read(limit + 1)
    if len(data) > limit:  # the body limit makes this unreachable; kept as a second fence
        raise e.PayloadTooLarge(f"the file is larger than the upload limit of {limit:,} bytes")
    name = (file.filename or "").replace("\\", "/").rsplit("/", 1)[-1].replace("\x00", "")[:255]
    return Upload(data=data, file_name=name)


def check_text(**fields: str | None) -> None:
    """Refuse form fields holding a NUL character (databases refuse it in text), naming each."""
    bad = [name for name, value in fields.items() if value is not None and "\x00" in value]
    if bad:
        raise e.InvalidInput(f"{', '.join(bad)} must not contain NUL characters",
                             fields=[e.FieldProblem(name, "remove the NUL character") for name in bad])


def optional_text(value: str | None) -> str | None:
    if value is None:
        return None
    value = value.strip()
    return value or None


def require_file(file: UploadFile | None, field: str, what: str) -> UploadFile:
    if file is None:
        raise e.InvalidInput(f"{what} is missing", fields=[e.FieldProblem(field, f"attach {what}")])
    return file
