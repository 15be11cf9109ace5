"""Configuration from the environment (prefix MIXCLOCK_), with embedded defaults."""

from __future__ import annotations

from functools import lru_cache

from pydantic import Field
from pydantic_settings import BaseSettings, SettingsConfigDict

__all__ = ["Settings", "get_settings"]


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="MIXCLOCK_", extra="ignore")

    host: str = Field("127.0.0.1", description="Address the server binds to.")
    port: int = Field(8000, ge=1, le=65535, description="TCP port.")
    workers: int = Field(1, ge=1, le=64, description="Worker processes for `mixclock serve`.")
    log_level: str = Field("info", description="uvicorn log level.")


@lru_cache(maxsize=1)
def get_settings() -> Settings:
    """The settings, read once; tests override this dependency or pass Settings to create_app."""
    return Settings()
