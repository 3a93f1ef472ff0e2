"""Reading a postings dump: JSON Lines or CSV, plain or gzip, as a re-iterable stream.

Each pass re-opens the file, so memory does not grow with the number of postings.
Bad records are skipped and counted by reason, with up to ten example line numbers
for each, so the team can find them in the dump.
"""

from __future__ import annotations

import csv
import gzip
import io
import json
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

from training.config import CorpusSection

__all__ = ["Posting", "ReadStats", "PostingCorpus", "REASONS"]

#: Why a record is skipped; each reason is counted separately.
REASONS = (
    "invalid_json",
    "invalid_utf8",
    "missing_field",
    "wrong_type",
    "empty_text",
    "line_too_long",
)
_EXAMPLES = 10


@dataclass(frozen=True)
class Posting:
    """One usable posting: its id, the text fields to learn from (title first), and its protected
    values (place, employer) as (field, value) pairs."""

    id: str
    texts: tuple[str, ...]
    protected: tuple[tuple[str, str], ...]
    line: int


@dataclass
class ReadStats:
    read: int = 0
    skipped: dict[str, int] = field(default_factory=dict)
    examples: dict[str, list[int]] = field(default_factory=dict)

    def skip(self, reason: str, line: int) -> None:
        self.skipped[reason] = self.skipped.get(reason, 0) + 1
        examples = self.examples.setdefault(reason, [])
        if len(examples) < _EXAMPLES:
            examples.append(line)

    @property
    def bad(self) -> int:
        return sum(self.skipped.values())

    def as_dict(self) -> dict[str, Any]:
        return {
            "read": self.read,
            "skipped": {r: {"count": self.skipped[r], "lines": self.examples[r]} for r in sorted(self.skipped)},
        }


def _open_binary(path: Path) -> IO[bytes]:
    fh = path.open("rb")
    magic = fh.read(2)
    fh.seek(0)
    if magic == b"\x1f\x8b":
        return gzip.GzipFile(fileobj=fh)  # type: ignore[return-value]
    return fh


def _detect_format(path: Path, declared: str) -> str:
    if declared != "auto":
        return declared
    suffixes = [s.lower() for s in path.suffixes]
    if ".csv" in suffixes:
        return "csv"
    return "jsonl"


class PostingCorpus:
    """Iterate over the usable postings of a dump; `stats` describes the last full pass."""

    def __init__(self, path: Path, config: CorpusSection) -> None:
        self.path = path
        self.config = config
        self.format = _detect_format(path, config.format)
        self.stats = ReadStats()

    def __iter__(self) -> Iterator[Posting]:
        self.stats = ReadStats()
        if self.format == "csv":
            yield from self._csv()
        else:
            yield from self._jsonl()

    # -- records -----------------------------------------------------------------------

    def _record(self, record: Any, line: int) -> Posting | None:
        stats = self.stats
        if not isinstance(record, dict):
            stats.skip("invalid_json", line)
            return None
        if "id" not in record or "title" not in record:
            stats.skip("missing_field", line)
            return None
        if not isinstance(record["id"], str) or not isinstance(record["title"], str) or not record["id"].strip():
            stats.skip("wrong_type", line)
            return None
        texts: list[str] = []
        for name in self.config.fields:
            value = record.get(name)
            if value is None:
                continue
            if not isinstance(value, str):
                stats.skip("wrong_type", line)
                return None
            texts.append(value)
        if "title" in self.config.fields:
            # The title is always the first text (its tokens are counted as title use).
            texts.remove(record["title"])
            texts.insert(0, record["title"])
        if not any(t.strip() for t in texts):
            stats.skip("empty_text", line)
            return None
        protected = tuple(
            (name, value.strip())
            for name, value in ((n, record.get(n)) for n in self.config.protected_fields)
            if isinstance(value, str) and value.strip()
        )
        return Posting(record["id"], tuple(texts), protected, line)

    # -- JSON Lines ----------------------------------------------------------------------

    def _jsonl(self) -> Iterator[Posting]:
        limit = self.config.max_line_bytes
        with _open_binary(self.path) as fh:
            line = 0
            while True:
                raw = fh.readline(limit + 1)
                if not raw:
                    break
                line += 1
                if (len(raw) > limit and not raw.endswith(b"\n")) or len(raw.rstrip(b"\r\n")) > limit:
                    # Skip the rest of an over-long line without holding it in memory.
                    while raw and not raw.endswith(b"\n"):
                        raw = fh.readline(limit + 1)
                    self.stats.read += 1
                    self.stats.skip("line_too_long", line)
                    continue
                if not raw.strip():
                    continue
                self.stats.read += 1
                try:
                    text = raw.decode("utf-8")
                except UnicodeDecodeError:
                    self.stats.skip("invalid_utf8", line)
                    continue
                try:
                    record = json.loads(text)
                except json.JSONDecodeError:
                    self.stats.skip("invalid_json", line)
                    continue
                posting = self._record(record, line)
                if posting is not None:
                    yield posting

    # -- CSV -----------------------------------------------------------------------------

    def _csv(self) -> Iterator[Posting]:
        limit = self.config.max_line_bytes
        csv.field_size_limit(limit)
        with _open_binary(self.path) as raw:
            text = io.TextIOWrapper(raw, encoding="utf-8", errors="surrogateescape", newline="")
            reader = csv.DictReader(text)
            while True:
                try:
                    row = next(reader)
                except StopIteration:
                    break
                except csv.Error:
                    self.stats.read += 1
                    self.stats.skip("line_too_long", reader.line_num)
                    continue
                self.stats.read += 1
                line = reader.line_num
                values = [v for v in row.values() if isinstance(v, str)]
                if any(_has_surrogate(v) for v in values):
                    self.stats.skip("invalid_utf8", line)
                    continue
                if sum(len(v) for v in values) > limit:
                    self.stats.skip("line_too_long", line)
                    continue
                # CSV has no types: an empty cell is an absent field.
                record = {k: v for k, v in row.items() if isinstance(k, str) and v not in (None, "")}
                posting = self._record(record, line)
                if posting is not None:
                    yield posting


def _has_surrogate(value: str) -> bool:
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False
