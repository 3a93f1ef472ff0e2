"""Service settings: every one from the environment (prefix WIDEN_) or from `widen serve` flags."""

from __future__ import annotations

from pathlib import Path

from pydantic import Field, SecretStr
from pydantic_settings import BaseSettings, SettingsConfigDict

__all__ = ["Settings"]


class Settings(BaseSettings):
    """What `widen serve` runs with; the README lists each with its default."""

    model_config = SettingsConfigDict(env_prefix="WIDEN_", extra="ignore")

    store: str | Path = Field(
        default="store", description="the store folder to serve, or a store's URL (http(s)://, file://, fsspec)"
    )
    # For a store given by URL: the local folder its bundles are mirrored into (default: a folder
    # under the system's temporary folder named after the URL). Any writable folder; an emptyDir.
    mirror: Path | None = None
    mirror_timeout_seconds: float = Field(default=10.0, gt=0)
    host: str = "127.0.0.1"
    port: int = Field(default=8000, ge=0, le=65535)
    workers: int = Field(default=1, ge=1, le=64)
    poll_seconds: float = Field(default=2.0, gt=0.0, le=3600.0, description="how often CURRENT is checked")
    decisions_poll_seconds: float = Field(default=0.5, gt=0.0, le=60.0)
    admin_token: SecretStr | None = None
    review_token: SecretStr | None = None
    cors_origins: list[str] = []
    cache_size: int = Field(default=10_000, ge=0)
    max_query_chars: int = Field(default=256, ge=1)
    max_query_tokens: int | None = Field(
        default=None, ge=1, le=256, description="overrides the bundle's expansion.max_tokens (default 32)"
    )
    max_batch: int = Field(default=100, ge=1)
    max_body_bytes: int = Field(default=64 * 1024, ge=1024)
    # /v1/concept-tokens carries postings whole: up to 1,000 of them, a few KiB each.
    max_tag_body_bytes: int = Field(default=16 * 1024 * 1024, ge=1024)
    access_log: bool = True
    # A postgresql:// database for the decisions, shared by replicas on several hosts; unset: the
    # store's own SQLite. A secret: it never appears in logs, errors or pages (password masked).
    decisions_url: SecretStr | None = None
    # Before a bundle serves, work out how every entry expands on its own (widen.expansion.expand.prepare),
    # so the first query of each phrase costs what a repeated one does; about 0.3 ms an entry.
    prepare: bool = True
    # How many entries to prepare before serving, the ones the most postings use first; the rest are
    # worked out on first use (the same answers). Above the vocabulary's size: every entry (a large
    # bundle then takes longer to become ready, and keeps about 9 KiB an entry: docs/benchmarks.md).
    # 10,000 chosen on the 200,000-posting real-title board's day: the searches whose job entries are all
    # among the 10,000 most used are 96.6% of the day's (5,000: 89%; 20,000: all, but 10 s more to ready).
    prepare_entries: int = Field(default=10_000, ge=0)
    demo_index: Path | None = None
    # The day's query log the worklist reads (`widen.worklist.querylog`; re-read when the file changes),
    # the days it covers (default: from its dates), and the board's own coded titles, one a line.
    query_log: Path | None = None
    query_log_days: float | None = Field(default=None, gt=0)
    coded_titles: Path | None = None
