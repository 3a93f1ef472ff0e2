"""The training configuration: one TOML file, validated before any work starts.

Every key has a visible default (`widen train --print-config`), an unknown key or a bad
value fails at once naming the key, and the whole effective config is copied into the
bundle's manifest so a bundle says exactly how it was made.
"""

from __future__ import annotations

import logging
import tomllib
from pathlib import Path
from typing import Any, Literal

import tomli_w
from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator

from widen.errors import ConfigError
from widen.expansion.options import ExpansionOptions
from widen.model.phrases import BRIDGE_WORDS, Scoring

__all__ = ["TrainConfig", "ConfigError", "load_config"]

log = logging.getLogger("widen.train")


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", validate_assignment=True)


class CorpusSection(_Section):
    fields: list[str] = Field(default=["title", "description"], min_length=1)
    protected_fields: list[str] = ["location", "employer"]
    max_bad_fraction: float = Field(default=0.05, ge=0.0, le=1.0)
    max_line_bytes: int = Field(default=1 << 20, ge=1024)
    format: Literal["auto", "jsonl", "csv"] = "auto"
    workers: int = Field(default=2, ge=1, le=64)

    @field_validator("fields")
    @classmethod
    def _title_first(cls, value: list[str]) -> list[str]:
        if "id" in value:
            raise ValueError("'id' is not a text field")
        return value


class PhrasesSection(_Section):
    min_count: int = Field(default=10, ge=1)
    threshold: float = 0.5
    max_words: int = Field(default=3, ge=1, le=6)
    scoring: Scoring = "npmi"
    # Words a phrase may bridge over ("head of care"); gensim's English list by default.
    bridge_words: list[str] = BRIDGE_WORDS
    # A title core (the job a title field names, decorations taken out) named by at least this many
    # postings becomes one vocabulary entry, up to `title_max_words` words, whatever the passes did.
    title_min_count: int = Field(default=10, ge=1)
    title_max_words: int = Field(default=4, ge=2, le=8)

    @model_validator(mode="before")
    @classmethod
    def _renamed(cls, data: Any) -> Any:
        if isinstance(data, dict) and "connector_words" in data:
            data = dict(data)
            old = data.pop("connector_words")
            data.setdefault("bridge_words", old)
            log.warning(
                "phrases.connector_words is now called bridge_words; read as such (the old name goes next release)"
            )
        return data

    @field_validator("scoring", mode="before")
    @classmethod
    def _old_name(cls, value: object) -> object:
        if value == "default":
            log.warning("phrases.scoring = 'default' is now called 'count_ratio' (what it computes); read as such")
            return "count_ratio"
        return value

    @model_validator(mode="after")
    def _threshold_fits_scorer(self) -> PhrasesSection:
        if self.scoring == "npmi" and not -1.0 < self.threshold < 1.0:
            raise ValueError("threshold: NPMI scores lie in (-1, 1), so the threshold must too")
        return self


class EmbeddingSection(_Section):
    vector_size: int = Field(default=100, ge=2, le=1000)
    window: int = Field(default=5, ge=1, le=50)
    negative: int = Field(default=5, ge=1, le=50)
    min_count: int = Field(default=5, ge=1)
    epochs: int = Field(default=5, ge=1, le=200)
    sample: float = Field(default=1e-3, ge=0.0, lt=1.0)
    alpha: float = Field(default=0.025, gt=0.0, le=1.0)
    seed: int = 1
    workers: int = Field(default=2, ge=1, le=64)


class NeighboursSection(_Section):
    top_k: int = Field(default=50, ge=1, le=1000)
    block_rows: int = Field(default=512, ge=1)  # the side of a square tile of V @ V.T


class DutiesSection(_Section):
    """The duties a title comes with: what the descriptions of the postings with that title say."""

    # A title named by fewer postings gets no duties profile. How much one profile shows is measured
    # per bundle at each size (`training.duties`), so even a title seen once is judged by what it can.
    min_postings: int = Field(default=1, ge=1)
    # The longest title (in words, decorations taken out) that gets a profile of its own.
    title_max_words: int = Field(default=8, ge=1, le=20)
    top_k: int = Field(default=50, ge=1, le=1000)
    block_rows: int = Field(default=1024, ge=1)


class ConceptsSection(_Section):
    """Concepts: k-means clusters of what postings say, at several sizes (`widen.model.concepts`)."""

    enabled: bool = True
    # Cluster counts, coarse to fine; a posting gets one token a size.
    sizes: list[int] = Field(default=[32, 128, 512], min_length=1, max_length=6)
    # Postings the clusters are learned from (an even sample of the dump); every posting is tagged.
    sample: int = Field(default=100_000, ge=100)
    iterations: int = Field(default=20, ge=1, le=200)
    # Lloyd iterations when continuing the previous bundle's concepts: few, so ids keep their meaning.
    continue_iterations: int = Field(default=2, ge=0, le=200)
    # Continue the serving bundle's concepts (same ids, so an index tagged last night keeps matching).
    carry_over: bool = True
    title_weight: float = Field(default=1.0, ge=0.0, le=10.0)
    sif_a: float = Field(default=1e-3, gt=0.0, le=1.0)
    # Take the dump's common direction out of the text part of every posting vector.
    remove_common: bool = True
    token_prefix: str = Field(default="wc", pattern=r"^[a-z]{1,8}$")
    label_titles: int = Field(default=5, ge=1, le=50)

    @field_validator("sizes")
    @classmethod
    def _ascending(cls, sizes: list[int]) -> list[int]:
        if any(s < 2 for s in sizes) or sorted(set(sizes)) != sizes:
            raise ValueError("sizes: distinct cluster counts of at least 2, coarse to fine (ascending)")
        return sizes


class GateSection(_Section):
    pairs: str = ""
    # Search impact (optional): labelled queries run on a tantivy index of `postings` (default:
    # the corpus being trained); refused when expanded recall@100 or nDCG@10 falls more than
    # impact_tolerance below the serving bundle's on the same queries.
    queries: str = ""
    postings: str = ""
    impact_tolerance: float = Field(default=0.02, ge=0.0, le=1.0)
    top_k: int = Field(default=10, ge=1, le=1000)
    min_similarity: float = Field(default=0.3, ge=-1.0, le=1.0)
    tolerance: float = Field(default=0.02, ge=0.0, le=1.0)
    min_score: float = Field(default=0.5, ge=0.0, le=1.0)


class StoreSection(_Section):
    keep: int = Field(default=5, ge=1)


class TrainConfig(_Section):
    corpus: CorpusSection = CorpusSection()
    phrases: PhrasesSection = PhrasesSection()
    embedding: EmbeddingSection = EmbeddingSection()
    neighbours: NeighboursSection = NeighboursSection()
    duties: DutiesSection = DutiesSection()
    concepts: ConceptsSection = ConceptsSection()
    gate: GateSection = GateSection()
    store: StoreSection = StoreSection()
    expansion: ExpansionOptions = ExpansionOptions()

    def to_toml(self) -> str:
        return tomli_w.dumps(self.model_dump())


def _explain(error: ValidationError) -> str:
    lines = []
    for item in error.errors():
        key = ".".join(str(part) for part in item["loc"])
        if item["type"] == "extra_forbidden":
            lines.append(f"unknown key '{key}'")
        else:
            lines.append(f"'{key}': {item['msg']} (got {item.get('input')!r})")
    return "; ".join(lines)


def load_config(path: Path | None, overrides: dict[str, Any] | None = None) -> TrainConfig:
    """Read and validate a TOML config; relative gate.pairs paths resolve against the file's folder."""
    data: dict[str, Any] = {}
    if path is not None:
        try:
            data = tomllib.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError as exc:
            raise ConfigError(f"config file not found: {path}") from exc
        except tomllib.TOMLDecodeError as exc:
            raise ConfigError(f"{path}: not valid TOML: {exc}") from exc
    for dotted, value in (overrides or {}).items():
        section, key = dotted.split(".", 1)
        data.setdefault(section, {})[key] = value
    try:
        config = TrainConfig.model_validate(data)
    except ValidationError as exc:
        where = f"{path}: " if path else ""
        raise ConfigError(where + _explain(exc)) from exc
    for key in ("pairs", "queries", "postings"):
        value = getattr(config.gate, key)
        if value and path is not None and not (overrides or {}).get(f"gate.{key}") and not Path(value).is_absolute():
            setattr(config.gate, key, str((path.parent / value).resolve()))
    return config
