"""A board's query log, as searches a day for each query typed.

Two formats, JSON Lines either way, plain or gzip (read by its first two bytes, whatever its name):

- **one search a line**, as the demo generator writes: `{"q": "care assistant hensby", "at":
  "2026-11-30T07:42:05Z"}` (`at` optional: without it the log is taken as one day's);
- **counts**, as a board exports them: `{"q": "care assistant hensby", "searches": 412}`, with an
  optional first line `{"days": 7}` saying how many days the counts cover (default 1).

A line of either kind may follow the other. Lines that are not JSON objects with a text `q` are
skipped and counted, never fatal: a log is evidence, not input that must be perfect.
"""

from __future__ import annotations

import gzip
import io
import json
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import IO

from widen.errors import BadInput

__all__ = ["QueryLog", "read_query_log"]


@dataclass(frozen=True)
class QueryLog:
    """Searches of each query (as typed, spaces collapsed) over `days` days; `skipped` lines."""

    searches: dict[str, float]
    days: float
    skipped: int = 0
    source: str = ""

    def per_day(self, query: str) -> float:
        return self.searches.get(query, 0.0) / self.days

    @property
    def total_per_day(self) -> float:
        return sum(self.searches.values()) / self.days


def _open(path: Path) -> IO[str]:
    with path.open("rb") as raw:
        gzipped = raw.read(2) == b"\x1f\x8b"
    if gzipped:
        return io.TextIOWrapper(gzip.open(path, "rb"), encoding="utf-8", errors="replace")
    return path.open(encoding="utf-8", errors="replace")


def read_query_log(path: Path, days: float | None = None) -> QueryLog:
    """The log at `path`; `days` overrides the days it covers. BadInput when it cannot be read at all."""
    if not path.is_file():
        raise BadInput(f"query log not found: {path}")
    searches: dict[str, float] = {}
    dates: set[str] = set()
    declared: float | None = None
    skipped = 0
    with _open(path) as fh:
        for line in fh:
            try:
                row = json.loads(line)
            except ValueError:
                skipped += line.strip() != ""
                continue
            if isinstance(row, dict) and isinstance(row.get("days"), int | float) and "q" not in row:
                declared = float(row["days"])
                continue
            query = " ".join(str(row.get("q", "")).split()) if isinstance(row, dict) else ""
            count = row.get("searches", 1) if isinstance(row, dict) else 0
            if not query or not isinstance(count, int | float) or isinstance(count, bool) or count <= 0:
                skipped += 1
                continue
            searches[query] = searches.get(query, 0.0) + float(count)
            at = row.get("at")
            if isinstance(at, str) and len(at) >= 10:
                dates.add(at[:10])
    span = _span(dates)
    covered = days or declared or span or 1.0
    return QueryLog(searches, covered, skipped, str(path))


def _span(dates: set[str]) -> float | None:
    """Days from the first date to the last, both counted; None without dates."""
    try:
        parsed = sorted(date.fromisoformat(d) for d in dates)
    except ValueError:
        return None
    return float((parsed[-1] - parsed[0]).days + 1) if parsed else None
