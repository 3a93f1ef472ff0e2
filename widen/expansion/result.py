"""The one result model of an expansion, shown unchanged by the CLI's JSON, the API and the page.

Why a neighbour was dropped is a closed set of reasons; each has its explanation in words here,
next to it, and every caller (CLI table, review page) shows those words.
"""

from __future__ import annotations

from typing import Any, Literal, Self

from pydantic import BaseModel, ConfigDict, Field

__all__ = [
    "ModelInfo",
    "Expansion",
    "Dropped",
    "Segment",
    "Clause",
    "ConceptClause",
    "ExpansionResult",
    "DropReason",
    "DROP_REASONS",
    "SegmentKind",
]

_set = object.__setattr__  # as pydantic sets a frozen model's own attributes
_FIELD_COUNTS: dict[type, int] = {}

SegmentKind = Literal["phrase", "term", "unknown", "noise", "place", "employer", "protected", "pattern", "modifier"]
Relation = Literal["equivalent", "related"]
Source = Literal["model", "duties", "composed", "pinned", "spelling", "pattern"]
DropReason = Literal[
    "protected",
    "number_or_stop_word",
    "below_min_similarity",
    "like_different_jobs",
    "blocked",
    "pinned",
    "same_as_original",
    "misspelled",
    "broader_than_original",
    "narrower_than_query",
    "off_query",
    "different_duties",
    "weak_evidence",
    "not_a_title",
    "other_head",
    "modifier_only",
    "kind_mismatch",
    "used_alongside",
    "near_duplicate",
    "related_in_strict_mode",
    "max_per_segment",
    "max_clauses",
    "duplicate_clause",
    "exempt",
]

#: What each drop reason means, in the words the CLI and the review page show.
DROP_REASONS: dict[str, str] = {
    "protected": "a place or employer name of the dump; never offered",
    "number_or_stop_word": "only numbers or stop words",
    "below_min_similarity": "similarity under the floor",
    "like_different_jobs": "no closer than two different jobs usually are in this bundle",
    "blocked": "blocked by a reviewer",
    "pinned": "already pinned by a reviewer",
    "same_as_original": "the same words in another spelling",
    "misspelled": "a title with a typo in it: a word the dump barely uses, a slip away from one it does",
    "broader_than_original": "broader than what was asked (fewer of its words)",
    "narrower_than_query": "a narrower job than the query names, for a word that is only part of its title",
    "off_query": "far from the whole query, for a word that is only part of its title",
    "different_duties": "posted with other duties than the phrase: a different job",
    "weak_evidence": "no more alike in duties than two different jobs are by chance, with as few postings",
    "not_a_title": "not a title any posting of the dump names: a word of the postings, not a job",
    "other_head": "a title with another head word, and no duties to say it is the same job",
    "modifier_only": "only a modifier, or differs only by one (senior, nights...)",
    "kind_mismatch": "rarely a job title, while the phrase is one",
    "used_alongside": "used beside the phrase (its context), not instead of it",
    "near_duplicate": "a spelling of a neighbour already kept",
    "related_in_strict_mode": "related, and strict mode keeps only equivalents",
    "max_per_segment": "over the limit of expansions for one segment",
    "max_clauses": "over the limit of clauses for the query",
    "duplicate_clause": "already a clause of this query",
    "exempt": "a reviewer exempted the phrase from expansion",
}


class _Frozen(BaseModel):
    model_config = ConfigDict(frozen=True, extra="forbid")

    @classmethod
    def built(cls, **values: Any) -> Self:
        """`model_construct` for values the code made a moment ago from checked ones, every field given
        in the order the model declares them: the object model_construct would make (tested, field for
        field and byte for byte), without its loop over the fields looking for aliases and defaults,
        which costs more than the rest of building a result. Any other call is model_construct's."""
        count = _FIELD_COUNTS.get(cls)
        if count is None:
            count = _FIELD_COUNTS[cls] = len(cls.model_fields)
        if len(values) != count:
            return cls.model_construct(**values)
        made = cls.__new__(cls)
        _set(made, "__dict__", values)
        _set(made, "__pydantic_fields_set__", set(values))
        _set(made, "__pydantic_extra__", None)
        _set(made, "__pydantic_private__", None)
        return made


class ModelInfo(_Frozen):
    version: str
    created_at: str


class Expansion(_Frozen):
    phrase: str
    similarity: float = Field(description="cosine similarity of the input vectors, -1..1")
    weight: float = Field(description="boost of this clause; always below the original's")
    relation: Relation = Field(description="equivalent: likely the same job; related: close, a different job")
    source: Source = Field(
        description="model: a skip-gram neighbour; duties: a title posted with alike duties; composed: a "
        "neighbour of the mean of the words; pinned: a reviewer's; spelling: the correction of a mistyped "
        "word; pattern: another spelling of a shift pattern"
    )
    duties: float | None = Field(
        default=None, description="cosine of the two titles' duties profiles, where both have one"
    )


class Dropped(_Frozen):
    phrase: str
    similarity: float
    reason: DropReason = Field(description="why it was dropped; DROP_REASONS in the README says it in words")
    relation: Relation | None = Field(default=None, description="the relation hint, where the model gave one")
    duties: float | None = Field(default=None, description="cosine of the duties profiles, where both have one")


class Segment(_Frozen):
    text: str = Field(description="the segment as the seeker typed it")
    kind: SegmentKind = Field(
        description="phrase, term: a job (required); unknown: not in the vocabulary; noise: names no job "
        "(dropped); place, employer, protected: a name from the dump's `field`; pattern: a shift pattern; "
        "modifier: qualifies a job without changing it"
    )
    field: str | None = Field(default=None, description="for a place or employer: the dump's field it came from")
    pattern: str | None = Field(default=None, description="for a shift pattern: its name")
    corrected: str | None = Field(default=None, description="the spelling correction of a mistyped segment")
    expansions: list[Expansion] = []
    dropped: list[Dropped] | None = Field(default=None, description="only when explain is asked")


class Clause(_Frozen):
    phrase: str
    weight: float
    original: bool
    segment: int = Field(description="index of the segment this clause belongs to")


class ConceptClause(_Frozen):
    token: str = Field(description="the concept's token, as `widen tag` writes it into the index's concept field")
    size: int = Field(description="how many concepts its granularity has (more: finer)")
    similarity: float = Field(description="cosine of the query's vector and the concept's centroid")
    weight: float = Field(description="boost of this clause; always below every clause of the query's words")
    label: list[str] = Field(default=[], description="the titles its postings name most")


class ExpansionResult(_Frozen):
    query: str
    model: ModelInfo
    segments: list[Segment]
    clauses: list[Clause]
    query_text: str = Field(
        description="the clauses in the engine's syntax: quoted phrases with ^boosts, a job's clauses OR'ed "
        "in one group marked + (required); a place, pattern or modifier also required (match=all, the default) or "
        "without a mark, only scoring (match=job); noise words left out"
    )
    full_query: str = Field(
        default="",
        description="the whole query to send for a front end that sends widen's: the seeker's words all "
        "required, boosted 10 (exact matches first), OR query_text, OR the seeker's words as optional terms "
        "at 0.1 (never fewer postings than the engine's default query), OR the concept clauses",
    )
    concepts: list[ConceptClause] = Field(
        default=[], description="the concepts nearest the query, where the `concepts` option is on"
    )
    concept_text: str = Field(default="", description="the concept clauses alone, OR'ed, on the concept field")
