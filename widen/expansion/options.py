"""How to expand: one schema, the `[expansion]` section of the training config.

It is validated with the rest of the config, saved in every bundle's manifest, used by the
gate to judge the candidate, and served with the bundle, so a model is judged with the options
it will be served with. A request (API, CLI flags, the review page) may narrow a few of them
through `with_request`; the service's environment may override only `max_tokens`.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, model_validator

from widen.model.manifest import Manifest
from widen.model.phrases import BRIDGE_WORDS

log = logging.getLogger("widen.options")

__all__ = ["ExpansionOptions", "DEFAULT_MODIFIERS", "DEFAULT_NOISE_WORDS", "DEFAULT_PATTERNS", "options_of"]

#: Words that qualify a job without changing it; a segment made only of them is never required.
DEFAULT_MODIFIERS = ["senior", "junior", "trainee", "relief", "bank", "lead"]
#: Words seekers add that name no job ("kp jobs near pellmire"); with the connector words of the
#: phrase miner. A segment made only of them is dropped from the query and shown as `noise`.
DEFAULT_NOISE_WORDS = [
    *BRIDGE_WORDS,
    "job",
    "jobs",
    "vacancy",
    "vacancies",
    "hiring",
    "near",
    "me",
    "near me",
    "nearby",
    "around",
    "local",
    "work",
    "role",
    "roles",
    "position",
    "positions",
    "opening",
    "openings",
    "urgent",
    "now",
]
#: Shift patterns and contracts, each with the spellings seekers and employers use for it (common
#: practice on job boards, no single source). A pattern is never expanded to another pattern; its
#: spellings found in the dump match each other (widen learns which ones the dump uses).
DEFAULT_PATTERNS = {
    "part time": ["part time", "p/t", "pt", "parttime"],
    "full time": ["full time", "f/t", "ft", "fulltime"],
    "temporary": ["temporary", "temp", "temp to perm"],
    "nights": ["nights", "night", "night shift", "night shifts", "nightshift", "waking nights", "overnight"],
    "weekends": ["weekends", "weekend", "weekend only", "weekend work"],
    "days": ["days", "day shift", "days only"],
}


class ExpansionOptions(BaseModel):
    """Every expansion option with its default; `widen train --print-config` shows them as `[expansion]`.

    Frozen and hashable: equal options are one key of the expansion cache, whichever object holds them
    (the hash is of the options' JSON, worked out once per object)."""

    model_config = ConfigDict(extra="forbid", frozen=True)
    _key: str | None = PrivateAttr(default=None)
    _hash: int | None = PrivateAttr(default=None)

    @model_validator(mode="before")
    @classmethod
    def _renamed(cls, data: Any) -> Any:
        """Keys renamed since the last release, read under their new names for one release, with a warning."""
        if isinstance(data, dict) and "original_boost" in data:
            data = dict(data)
            old = data.pop("original_boost")
            if "boost_scale" not in data:
                data["boost_scale"] = old
            log.warning(
                "expansion.original_boost is now called boost_scale; read as such (the old name goes next release)"
            )
        return data

    max_per_segment: int = Field(default=5, ge=0, le=50, description="expansions kept for one segment")
    max_clauses: int = Field(default=12, ge=1, le=200, description="clauses in the whole query_text")
    min_similarity: float = Field(default=0.7, ge=0.0, le=1.0, description="neighbours below this cosine are dropped")
    max_expansion_weight: float = Field(default=0.5, gt=0.0, lt=1.0, description="an expansion's weight stays below")
    related_factor: float = Field(default=0.5, gt=0.0, le=1.0, description="weight factor of a related neighbour")
    strict: bool = Field(default=False, description="leave out neighbours hinted related (a different job)")
    boost_scale: float = Field(
        default=1.0, gt=0.0, le=100.0, description="every clause's weight, the seeker's words' too, is times this"
    )
    operator: Literal["AND", "OR"] = "AND"
    allow_modifier_changes: bool = False
    modifiers: tuple[str, ...] = tuple(DEFAULT_MODIFIERS)
    noise_words: tuple[str, ...] = Field(default=tuple(DEFAULT_NOISE_WORDS), description="dropped from the query")
    patterns: dict[str, tuple[str, ...]] = Field(
        default_factory=lambda: {k: tuple(v) for k, v in DEFAULT_PATTERNS.items()},
        description="shift patterns and their spellings; a pattern only ever matches its own spellings",
    )
    # A segment that names a job (its entry is often in titles) only expands to entries that do too.
    title_share: float = Field(default=0.05, ge=0.0, le=1.0)
    # The relation hint between two titles with duties profiles, as shares of the bundle's own
    # "same job" cosine (the median of a title's two halves, `duties.split_half` in the manifest):
    # equivalent at or above `equivalent_duties`, related down to `related_duties`, dropped below.
    equivalent_duties: float = Field(default=0.75, gt=0.0, le=1.0)
    related_duties: float = Field(default=0.5, ge=0.0, le=1.0)
    # Where a pair has no duties profiles, a neighbour must also be closer than two titles with
    # different duties are in this bundle, at the quantile that lets through, by chance, this many
    # different jobs among the `candidates` looked at: 1 - chance_neighbours / candidates (worked out
    # at load from the bundle's own titles; high on a dump whose templates make every title look alike).
    chance_neighbours: float = Field(default=0.5, ge=0.0, le=50.0)
    # Abstain below the duties cosine two different jobs reach with this probability by chance, at the
    # sizes (postings) of the two titles' profiles, as the bundle measured it; "off" does not.
    chance_duties: Literal["off", "0.9", "0.95", "0.99"] = "0.99"
    # The relation hint where a pair has no duties profiles: equivalent needs both.
    equivalent_similarity: float = Field(default=0.8, ge=-1.0, le=1.0)
    equivalent_in_out: float = Field(default=-0.15, ge=-1.0, le=1.0)
    # Above this input-output cosine a neighbour is the phrase's context (used right beside it), not a name for it.
    alongside_in_out: float = Field(default=0.15, ge=-1.0, le=1.0)
    # A spelling correction weighs this much of the seeker's own word (which stays, and stays first).
    spelling_weight: float = Field(default=0.8, gt=0.0, lt=1.0)
    # Another spelling of the seeker's shift pattern that the dump uses weighs this much.
    pattern_weight: float = Field(default=0.9, gt=0.0, le=1.0)
    # How query_text names a place or employer: in the free text (`text`), or in its own field of the
    # index (`field`, as `location:"Hensby"`), which agency boilerplate listing every town cannot match.
    places: Literal["text", "field"] = "text"
    # The index's field for each of the dump's protected fields, where the names differ.
    field_names: dict[str, str] = Field(default_factory=dict)
    # Which segments query_text requires; noise words are dropped either way. `all`: every other
    # segment (the job through its expansions, a place, a shift pattern through its spellings, a
    # modifier). `job`: only the job; places, patterns and modifiers only score. full_query keeps
    # the seeker's words as optional terms after both, so neither loses a posting the engine's
    # default query finds; `all` ranks those that match everything first (measured best on the demo
    # board, held on the second: README, "How widen builds the query").
    match: Literal["job", "all"] = "all"
    # Offer a correction for a word the bundle has never seen (a known word is never corrected).
    spelling: bool = True
    candidates: int = Field(default=50, ge=1, le=1000)
    max_words: int = Field(default=3, ge=1, le=6)
    # A run of job words that is no known entry or title is searched as one title the seeker means,
    # by its words, up to this many words (0: each word on its own).
    compose_runs: int = Field(default=8, ge=0, le=20)
    max_tokens: int = Field(default=32, ge=1, le=256, description="tokens of a query looked at")
    # Concept clauses (`widen.expansion.concept_clauses`): the concepts nearest the query, as clauses on
    # the index's concept field. Off until the team's index holds that field (`widen tag`).
    concepts: bool = Field(default=False, description="add concept clauses (the index must hold the field)")
    concept_field: str = Field(default="concepts", pattern=r"^[A-Za-z0-9_-]+$")
    concept_nearest: int = Field(default=5, ge=1, le=50, description="concepts of each size a query adds")
    # Weight of a concept of each size, coarse to fine (a finer concept says more), times its cosine to
    # the query and times `concept_scale`; always below every clause of the seeker's words and expansions.
    concept_weights: tuple[float, ...] = Field(default=(0.1, 0.2, 0.4, 0.8), min_length=1, max_length=6)
    concept_scale: float = Field(default=0.5, gt=0.0, le=1.0)
    concept_min_similarity: float = Field(default=0.3, ge=-1.0, le=1.0)

    def with_request(
        self,
        max: int | None = None,
        min_similarity: float | None = None,
        boost_scale: float | None = None,
        operator: str | None = None,
        strict: bool | None = None,
        places: str | None = None,
        match: str | None = None,
        concepts: bool | None = None,
    ) -> ExpansionOptions:
        """These options narrowed by what one request asks for (CLI flags, API fields, page); None keeps."""
        asked: dict[str, Any] = {
            "max_per_segment": max,
            "min_similarity": min_similarity,
            "boost_scale": boost_scale,
            "operator": operator,
            "strict": strict,
            "places": places,
            "match": match,
            "concepts": concepts,
        }
        update = {k: v for k, v in asked.items() if v is not None}
        if not update:
            return self
        return ExpansionOptions.model_validate({**self.model_dump(), **update})

    def cache_key(self) -> str:
        """The options as JSON, worked out once per object: equal options, equal keys."""
        private = self.__pydantic_private__  # a slot: reading it is cheap, unlike a private attribute
        assert private is not None
        key: str | None = private.get("_key")
        if key is None:
            key = private["_key"] = self.model_dump_json()
        return key

    def __hash__(self) -> int:
        private = self.__pydantic_private__
        assert private is not None
        found: int | None = private.get("_hash")
        if found is None:
            found = private["_hash"] = hash(self.cache_key())
        return found

    def __eq__(self, other: object) -> bool:
        return self is other or (isinstance(other, ExpansionOptions) and self.cache_key() == other.cache_key())

    def model_copy(self, *, update: Mapping[str, Any] | None = None, deep: bool = False) -> ExpansionOptions:
        copied = super().model_copy(update=update, deep=deep)
        assert copied.__pydantic_private__ is not None
        copied.__pydantic_private__["_key"] = None  # the copy's fields differ: its key is its own
        copied.__pydantic_private__["_hash"] = None
        return copied

    def apart_quantile(self) -> float:
        """The quantile of different jobs' cosines a neighbour with no duties profile must pass."""
        return max(0.0, 1.0 - self.chance_neighbours / self.candidates)

    def pattern_words(self) -> frozenset[str]:
        """Every word of every pattern spelling ("part", "time", "p/t", "nights"...)."""
        return frozenset(w for spellings in self.patterns.values() for s in spellings for w in s.split(" "))

    def not_inside_phrases(self) -> frozenset[str]:
        """Words no mined phrase may join to others: pattern words and noise words, connectors aside."""
        return (self.pattern_words() | frozenset(self.noise_words)) - frozenset(BRIDGE_WORDS)


def options_of(manifest: Manifest) -> ExpansionOptions:
    """The expansion options a bundle was trained and gated with (the defaults for a bundle without)."""
    saved = manifest.config.get("expansion")
    return ExpansionOptions.model_validate(saved) if saved else ExpansionOptions()
