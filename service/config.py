"""The one Settings object; the only module that reads environment variables."""

from __future__ import annotations

from enum import Enum
from functools import lru_cache
from pathlib import Path

from pydantic import Field, model_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

DEFAULT_SECRET = "change-me-bandgate-dev-secret"


class Mode(str, Enum):
    production = "production"
    dev = "dev"
    demo = "demo"


class SettingsError(ValueError):
    """A setting is missing or unsafe; the message names it and the fix."""


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="BANDGATE_", extra="ignore")

    mode: Mode = Mode.dev
    database_url: str = "sqlite:///./var/bandgate.db"
    secret_key: str = DEFAULT_SECRET
    data_dir: Path = Path("./var/data")
    max_upload_bytes: int = Field(default=10 * 1024 * 1024, ge=1024)
    session_idle_minutes: int = Field(default=15, ge=1)
    session_absolute_hours: int = Field(default=12, ge=1)
    instrument_check_days: float = Field(default=1.0, gt=0)

    @model_validator(mode="after")
    def _refuse_default_secret(self) -> "Settings":
        if self.mode is Mode.production and (
            self.secret_key == DEFAULT_SECRET or len(self.secret_key) < 32
        ):
            raise SettingsError(
                "BANDGATE_SECRET_KEY is left at its default or shorter than 32 characters; "
                "set a long random value (e.g. `python -c 'import secrets; print(secrets.token_urlsafe(48))'`) "
                "before running in production mode"
            )
        return self

    @property
    def is_sqlite(self) -> bool:
        return self.database_url.startswith("sqlite")


@lru_cache(maxsize=1)
def get_settings() -> Settings:
    """The settings from the environment; a wrong value becomes a SettingsError naming it."""
    from pydantic import ValidationError

    try:
        return Settings()
    except ValidationError as exc:
        problems = "; ".join(
            f"BANDGATE_{'_'.join(str(p) for p in err['loc']).upper() or 'SETTINGS'}: {err['msg']}"
            for err in exc.errors()
        )
        raise SettingsError(problems) from None
