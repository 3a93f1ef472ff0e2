"""The one clock: every timestamp widen writes (manifests, journal, decisions, logs) is UTC in one format."""

from __future__ import annotations

import hashlib
import time

__all__ = ["utc_stamp", "new_version"]


def utc_stamp(now: float | None = None) -> str:
    """UTC to the second, ISO 8601 with a Z: 2026-11-30T02:30:00Z."""
    return time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime(time.time() if now is None else now))


def new_version(seed_text: str, now: float | None = None) -> str:
    """A bundle version: sortable by time (UTC, to the microsecond) with a short hash of what made it."""
    now = time.time() if now is None else now
    stamp = time.strftime("%Y%m%dT%H%M%S", time.gmtime(now)) + f"{int(now * 1e6) % 1_000_000:06d}Z"
    short = hashlib.sha256(f"{seed_text}|{now}".encode()).hexdigest()[:8]
    return f"{stamp}-{short}"
