"""A bundle's `manifest.json` as one typed model: what is in the bundle and how it was made.

Written once by `BundleWriter.finish`, read and checked once by `read_manifest`; everything else
(the store's listing, the service's /v1/model, the gate, the lexicon) reads its fields, never the
JSON by hand. `config` is the whole effective training config, defaults included, as the nightly
job validated it (`training.config.TrainConfig`); the core reads only the sections it needs from it
(`phrases.max_words` here, `expansion` in `widen.expansion.options.served_options`).
"""

from __future__ import annotations

import json
from typing import Any

from pydantic import BaseModel, ConfigDict, Field

__all__ = ["Manifest", "CorpusInfo", "SkipInfo", "DutiesInfo", "GateInfo", "FORMAT_VERSION"]

#: The bundle layout this code reads and writes.
FORMAT_VERSION = 1


class _Part(BaseModel):
    # A bundle written by a newer widen may say more; this code reads what it knows.
    model_config = ConfigDict(extra="ignore", frozen=True)


class SkipInfo(_Part):
    count: int
    lines: list[int] = []


class CorpusInfo(_Part):
    """The dump the bundle was learned from."""

    path: str
    sha256: str
    format: str = ""
    postings_read: int = 0
    postings_used: int = 0
    skipped: dict[str, SkipInfo] = {}
    duplicates: int = 0
    tokens: int = 0


class DutiesInfo(_Part):
    """The duties profiles: how many titles have one, and the bundle's own "same job" cosine."""

    titles: int = 0
    min_postings: int | None = None
    split_half: float | None = Field(default=None, description="median cosine of a title's two halves")
    split_half_titles: int | None = None
    sizes: list[int] = Field(default=[], description="profile sizes (postings) the tables below are for")
    same_job: list[list[float | None]] = Field(
        default=[], description="median cosine of two samples of one title, by the two samples' sizes"
    )
    chance: dict[str, list[list[float | None]]] = Field(
        default={}, description="quantiles of the cosine of samples of two different titles, by sizes"
    )


class GateInfo(_Part):
    passed: bool
    score: float | None = None
    current_score: float | None = None
    reasons: list[str] = []
    details: dict[str, Any] = {}
    forced: bool = False


class Manifest(_Part):
    format_version: int
    version: str
    created_at: str
    corpus: CorpusInfo | None = None
    config: dict[str, Any] = {}
    vocabulary_size: int = 0
    phrase_count: int = 0
    title_phrases: int = 0
    protected_count: int = 0
    duties: DutiesInfo = DutiesInfo()
    concepts: dict[str, Any] = Field(default={}, description="how the concepts were learned (widen.model.concepts)")
    gate: GateInfo | None = None
    software: dict[str, str] = {}
    seconds: dict[str, float] = {}
    files: dict[str, str] = {}

    @property
    def max_words(self) -> int:
        """The longest phrase the bundle's phrase passes form."""
        return int(self.config.get("phrases", {}).get("max_words", 3))

    @property
    def split_half(self) -> float | None:
        return self.duties.split_half

    def to_json(self) -> str:
        """The manifest as written to disk: every field in order, indented."""
        return json.dumps(self.model_dump(mode="json"), indent=2) + "\n"
