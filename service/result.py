"""The one result model of an expansion, shown unchanged by the CLI's JSON, the API and the page."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

__all__ = ["ModelInfo", "Expansion", "Dropped", "Segment", "Clause", "ExpansionResult"]

SegmentKind = Literal["phrase", "term", "unknown", "protected"]
Relation = Literal["equivalent", "related"]
Source = Literal["model", "composed", "pinned"]


class _Frozen(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")


class ModelInfo(_Frozen):
    version: str
    created_at: str


class Expansion(_Frozen):
    phrase: str
    similarity: float = Field(description="cosine similarity of the input vectors, -1..1")
    weight: float = Field(description="boost of this clause; always below the original's")
    relation: Relation = Field(description="equivalent: likely the same job; related: close, a different job")
    source: Source


class Dropped(_Frozen):
    phrase: str
    similarity: float
    reason: str
    relation: Relation | None = Field(default=None, description="the relation hint, where the model gave one")


class Segment(_Frozen):
    text: str
    kind: SegmentKind
    expansions: list[Expansion] = []
    dropped: list[Dropped] | None = Field(default=None, description="only when explain is asked")


class Clause(_Frozen):
    phrase: str
    weight: float
    original: bool
    segment: int = Field(description="index of the segment this clause belongs to")


class ExpansionResult(_Frozen):
    query: str
    model: ModelInfo
    segments: list[Segment]
    clauses: list[Clause]
    query_text: str = Field(description="the clauses as a boolean query string (quoted phrases, ^boosts, OR, AND)")
