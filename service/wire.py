"""The request and response bodies of the API (the result model itself is `widen.expansion.result`)."""

from __future__ import annotations

import logging
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from widen.decisions.decision import Decision
from widen.expansion.result import ExpansionResult

log = logging.getLogger("widen.serve")

__all__ = [
    "RequestOptions",
    "asked_of",
    "boost_scale_of",
    "ExpandRequest",
    "BatchRequest",
    "BatchResponse",
    "ModelResponse",
    "Status",
    "ReloadResponse",
    "DecisionRequest",
    "DecisionList",
    "DecisionExport",
    "ImportResponse",
]


class RequestOptions(BaseModel):
    """What one request may ask of the expansion; anything left out takes the served options. Frozen,
    so equal asks are one key of the response cache."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)

    max: int | None = Field(default=None, ge=1, le=50, description="at most this many expansions a segment")
    min_similarity: float | None = Field(default=None, ge=0.0, le=1.0)
    explain: bool = False
    boost_scale: float | None = Field(
        default=None, gt=0.0, le=100.0, description="every clause's weight, the seeker's words' too, is times this"
    )
    original_boost: float | None = Field(
        default=None,
        gt=0.0,
        le=100.0,
        description="deprecated: the old name of boost_scale, read for one release",
        json_schema_extra={"deprecated": True},
    )
    operator: Literal["AND", "OR"] | None = None
    places: Literal["text", "field"] | None = Field(
        default=None, description="a place or employer in the free text, or in its own field of the index"
    )
    match: Literal["job", "all"] | None = Field(
        default=None, description="all (default): every segment but noise words is required; job: only the job"
    )
    concepts: bool | None = Field(
        default=None, description="add concept clauses (only once the index holds the postings' concept tokens)"
    )


class ExpandRequest(RequestOptions):
    query: str = Field(
        min_length=1,
        description="the seeker's query, as typed (at most WIDEN_MAX_QUERY_CHARS characters, 256 by default)",
    )


class BatchRequest(RequestOptions):
    queries: list[str] = Field(min_length=1, max_length=100)


def boost_scale_of(asked: RequestOptions) -> float | None:
    """The boost scale a request asks for, under its name or its old one (logged: the old name goes next release)."""
    if asked.original_boost is not None and asked.boost_scale is None:
        log.warning("the request parameter original_boost is now called boost_scale; read as such")
        return asked.original_boost
    return asked.boost_scale


def asked_of(body: RequestOptions) -> RequestOptions:
    """What a request body asks of the options alone (a POST's query and a batch's queries left out)."""
    return RequestOptions.model_construct(**{name: getattr(body, name) for name in RequestOptions.model_fields})


class BatchResponse(BaseModel):
    results: list[ExpansionResult]


class ModelResponse(BaseModel):
    version: str
    created_at: str
    vocabulary_size: int
    phrase_count: int
    corpus: dict[str, Any]
    gate: dict[str, Any]


class Status(BaseModel):
    status: str
    version: str | None = None
    decisions: str | None = Field(
        default=None, description="'current', or why the decisions in use may be stale (their database is away)"
    )


class ReloadResponse(BaseModel):
    result: str
    version: str | None


class DecisionRequest(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)

    phrase: str = Field(min_length=1, max_length=256, description="the phrase the decision is for, as typed")
    neighbour: str | None = Field(default=None, max_length=256, description="for block and pin; null for exempt")
    action: Literal["block", "pin", "exempt", "looked"]
    weight: float | None = Field(default=None, gt=0.0, lt=1.0, description="for pin only: the clause weight")
    reviewer: str = Field(min_length=1, max_length=100)
    note: str | None = Field(default=None, max_length=1000)


class DecisionList(BaseModel):
    decisions: list[Decision]


class DecisionExport(BaseModel):
    format: Literal["widen-decisions"]
    version: int
    decisions: list[dict[str, Any]] = Field(max_length=100_000)


class ImportResponse(BaseModel):
    added: int
