"""How to expand: one schema, the `[expansion]` section of the training config.

It is validated with the rest of the config, saved in every bundle's manifest, used by the
gate to judge the candidate, and served with the bundle, so a model is judged with the options
it will be served with. A request (API, CLI flags, the review page) may narrow a few of them
through `with_request`; the service's environment may override only `max_tokens`.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field

from widen.phrases import CONNECTOR_WORDS

__all__ = ["ExpansionOptions", "DEFAULT_MODIFIERS", "DEFAULT_STOP_WORDS"]

DEFAULT_MODIFIERS = [
    "senior",
    "junior",
    "trainee",
    "relief",
    "bank",
    "temporary",
    "temp",
    "part",
    "full",
    "time",
    "nights",
    "night",
    "shift",
    "days",
    "weekend",
    "lead",
]
# Connector words (the phrase miner's own list) and words seekers add that name no job.
DEFAULT_STOP_WORDS = [*CONNECTOR_WORDS, "job", "jobs", "vacancy", "vacancies", "work", "near", "me"]


class ExpansionOptions(BaseModel):
    """Every expansion option with its default; `widen train --print-config` shows them as `[expansion]`."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    max_per_segment: int = Field(default=5, ge=0, le=50, description="expansions kept for one segment")
    max_clauses: int = Field(default=12, ge=1, le=200, description="clauses in the whole query_text")
    min_similarity: float = Field(default=0.7, ge=0.0, le=1.0, description="neighbours below this cosine are dropped")
    max_expansion_weight: float = Field(default=0.5, gt=0.0, lt=1.0, description="an expansion's weight stays below")
    related_factor: float = Field(default=0.5, gt=0.0, le=1.0, description="weight factor of a related neighbour")
    strict: bool = Field(default=False, description="leave out neighbours hinted related (a different job)")
    original_boost: float = Field(default=1.0, gt=0.0, le=100.0, description="every clause's weight is times this")
    operator: Literal["AND", "OR"] = "AND"
    allow_modifier_changes: bool = False
    modifiers: tuple[str, ...] = tuple(DEFAULT_MODIFIERS)
    stop_words: tuple[str, ...] = tuple(DEFAULT_STOP_WORDS)
    # A segment that names a job (its entry is often in titles) only expands to entries that do too.
    title_share: float = Field(default=0.05, ge=0.0, le=1.0)
    # The relation hint: equivalent needs both.
    equivalent_similarity: float = Field(default=0.8, ge=-1.0, le=1.0)
    equivalent_in_out: float = Field(default=-0.15, ge=-1.0, le=1.0)
    # Above this input-output cosine a neighbour is the phrase's context (used right beside it), not a name for it.
    alongside_in_out: float = Field(default=0.15, ge=-1.0, le=1.0)
    candidates: int = Field(default=50, ge=1, le=1000)
    max_words: int = Field(default=3, ge=1, le=6)
    max_tokens: int = Field(default=32, ge=1, le=256, description="tokens of a query looked at")

    def with_request(
        self,
        max: int | None = None,
        min_similarity: float | None = None,
        original_boost: float | None = None,
        operator: str | None = None,
        strict: bool | None = None,
    ) -> ExpansionOptions:
        """These options narrowed by what one request asks for (CLI flags, API fields, page); None keeps."""
        asked: dict[str, Any] = {
            "max_per_segment": max,
            "min_similarity": min_similarity,
            "original_boost": original_boost,
            "operator": operator,
            "strict": strict,
        }
        update = {k: v for k, v in asked.items() if v is not None}
        if not update:
            return self
        return ExpansionOptions.model_validate({**self.model_dump(), **update})
