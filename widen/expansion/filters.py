"""Which candidates a span keeps: every filter in one ordered list, each with the reason it gives.

The first filter that holds is the reason a candidate is dropped (`DROP_REASONS` in
`widen.expansion.result` says each in words). A filter is *fixed* when the bundle and the options
alone decide it, whatever the query around the span and whatever the reviewers decided: those are
worked out once per entry and options (`decide`, kept as `Decided`). The others read the
reviewers' decisions for the phrase or the query around it, and are checked on every call (`sift`),
in their place in the same order.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from widen.decisions.decision import PhraseDecisions
from widen.expansion.cache import ExpansionCache
from widen.expansion.candidates import Candidate, relation_of
from widen.expansion.lexicon import EntryFacts, Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import JOBS
from widen.expansion.result import DropReason
from widen.expansion.segment import Span
from widen.text.forms import PHRASE_JOINER, spelling_key

__all__ = ["FILTERS", "Filter", "Decided", "Ground", "Situation", "QueryContext", "decide", "sift", "query_contexts"]


@dataclass(frozen=True)
class Ground:
    """What the fixed filters read of the span itself, the bundle and the options."""

    lexicon: Lexicon
    options: ExpansionOptions
    own_words: frozenset[str]
    own_core: frozenset[str]  # its words less modifiers and pattern words
    own_spelling: str
    modifiers: frozenset[str]
    floor: float  # duties cosine below which two titles are different jobs
    apart: float  # input cosine two different jobs reach in this bundle (no duties profile)
    titled: bool  # the bundle has duties profiles
    own_share: float


@dataclass(frozen=True)
class QueryContext:
    """What one span's filters need to know of the whole query."""

    words: frozenset[str]  # every word of the query's job spans
    head: bool  # a single word next to another job span: the head of a title split in two
    whole: npt.NDArray[np.float32] | None  # the job spans' composed vector, for a head word


@dataclass
class Situation:
    """What the filters that run on every call read: the reviewers' decisions for the phrase, the query
    around the span, and what the span has kept so far."""

    lexicon: Lexicon
    options: ExpansionOptions
    said: PhraseDecisions
    pinned: frozenset[str]
    context: QueryContext
    own_words: frozenset[str]
    slots: int
    taken: set[str] = field(default_factory=set)  # spelling keys already kept (the span's own first)
    kept: int = 0


FixedTest = Callable[[Candidate, EntryFacts, Ground], bool]
CallTest = Callable[[Candidate, EntryFacts, str, Situation], bool]


@dataclass(frozen=True)
class Filter:
    """One filter: the reason it gives, and either a fixed test or a per-call test with the condition
    under which it can hold at all in one call (a filter that cannot is skipped for the whole span)."""

    reason: DropReason
    fixed: FixedTest | None = None
    test: CallTest | None = None
    applies: Callable[[Situation], bool] = lambda s: True


def _off_query(c: Candidate, e: EntryFacts, relation: str, s: Situation) -> bool:
    whole = s.context.whole
    return whole is not None and float(s.lexicon.normed[c.entry] @ whole) < s.options.min_similarity


#: Every filter, in the order they are tried.
FILTERS: tuple[Filter, ...] = (
    Filter("protected", fixed=lambda c, e, g: e.protected),
    Filter("number_or_stop_word", fixed=lambda c, e, g: e.junk),
    Filter("below_min_similarity", fixed=lambda c, e, g: c.duties is None and c.similarity < g.options.min_similarity),
    Filter("like_different_jobs", fixed=lambda c, e, g: c.duties is None and c.similarity < g.apart),
    Filter("blocked", test=lambda c, e, r, s: e.phrase in s.said.blocked, applies=lambda s: bool(s.said.blocked)),
    Filter("pinned", test=lambda c, e, r, s: e.phrase in s.pinned, applies=lambda s: bool(s.pinned)),
    Filter("same_as_original", fixed=lambda c, e, g: e.spelling == g.own_spelling),
    Filter("broader_than_original", fixed=lambda c, e, g: e.content < g.own_words),
    Filter(
        "modifier_only",
        fixed=lambda c, e, g: (
            e.content <= g.modifiers
            or (not g.options.allow_modifier_changes and (e.content - g.modifiers) == g.own_core)
        ),
    ),
    Filter(
        "narrower_than_query",
        test=lambda c, e, r, s: s.own_words < e.content and not (e.content - s.own_words) <= s.context.words,
        applies=lambda s: s.context.head,
    ),
    Filter("off_query", test=_off_query, applies=lambda s: s.context.head and s.context.whole is not None),
    Filter("different_duties", fixed=lambda c, e, g: c.duties is not None and c.duties < g.floor),
    # In a bundle with duties profiles, a neighbour with no profile of its own is no title the dump
    # posts often enough to tell its duties: a word of the postings' text ("hold", "category" for
    # "driver"), not another name for a job. A title with a profile is compared by duties.
    Filter(
        "not_a_title",
        fixed=lambda c, e, g: g.titled and c.duties is None and not g.lexicon.has_duties(c.entry),
    ),
    Filter("kind_mismatch", fixed=lambda c, e, g: g.own_share >= g.options.title_share > c.title_share),
    Filter(
        "used_alongside",
        fixed=lambda c, e, g: c.duties is None and c.in_out_similarity > g.options.alongside_in_out,
    ),
    Filter("near_duplicate", test=lambda c, e, r, s: e.spelling in s.taken),
    Filter("related_in_strict_mode", test=lambda c, e, r, s: r == "related", applies=lambda s: s.options.strict),
    Filter("max_per_segment", test=lambda c, e, r, s: s.kept >= s.slots),
)


def _runs(filters: Sequence[Filter]) -> tuple[tuple[Filter, ...] | Filter, ...]:
    """The list as runs: a run of fixed filters (decided once, kept as the first reason that holds in
    it), or one per-call filter. `Decided.reasons` holds one reason (or None) per fixed run, in order."""
    runs: list[tuple[Filter, ...] | Filter] = []
    for f in filters:
        if f.fixed is None:
            runs.append(f)
        elif runs and isinstance(runs[-1], tuple):
            runs[-1] = (*runs[-1], f)
        else:
            runs.append((f,))
    return tuple(runs)


_RUNS = _runs(FILTERS)
_FIXED_RUNS = tuple(r for r in _RUNS if isinstance(r, tuple))


@dataclass(frozen=True)
class Decided:
    """What the fixed filters decide of one candidate: its facts, its relation hint, per fixed run the
    first reason that holds (None: none does), and the first of those (`first`)."""

    facts: EntryFacts
    relation: str
    reasons: tuple[DropReason | None, ...]
    first: DropReason | None


def _first_that_holds(run: tuple[Filter, ...], c: Candidate, e: EntryFacts, g: Ground) -> DropReason | None:
    for f in run:
        if f.fixed is not None and f.fixed(c, e, g):
            return f.reason
    return None


def ground(lex: Lexicon, cache: ExpansionCache, text: str, own_share: float, options: ExpansionOptions) -> Ground:
    stop = frozenset(options.noise_words)
    modifiers = frozenset(options.modifiers) | options.pattern_words()
    own_words = frozenset(text.split(" ")) - stop
    return Ground(
        lex,
        options,
        own_words,
        own_words - modifiers,
        spelling_key(text, stop),
        modifiers,
        options.related_duties * (lex.split_half or 0.0),
        cache.different_jobs_cosine(options) or 0.0,
        lex.split_half is not None,
        own_share,
    )


def decide(
    lex: Lexicon,
    cache: ExpansionCache,
    text: str,
    found: Sequence[Candidate],
    own_share: float,
    options: ExpansionOptions,
) -> tuple[Decided, ...]:
    """The fixed filters for each candidate of the span `text`, in `found`'s order."""
    g = ground(lex, cache, text, own_share, options)
    stop = frozenset(options.noise_words)
    out = []
    for c in found:
        e = cache.entry(c.entry, stop, options.title_share)
        reasons = tuple(_first_that_holds(run, c, e, g) for run in _FIXED_RUNS)
        first = next((r for r in reasons if r is not None), None)
        out.append(Decided(e, relation_of(c, lex, options), reasons, first))
    return tuple(out)


def sift(
    found: Sequence[Candidate], decided: Sequence[Decided], s: Situation, explain: bool
) -> tuple[list[tuple[Candidate, Decided]], list[tuple[Candidate, Decided, DropReason]]]:
    """Run the filters in order over the candidates: those kept (at most `s.slots`), and, with
    `explain`, every one dropped with its reason. Each kept one's spelling is taken, so a later
    spelling of it is a near duplicate."""
    steps: list[int | Filter] = []
    fixed = 0
    for run in _RUNS:
        if isinstance(run, tuple):
            steps.append(fixed)
            fixed += 1
        elif run.applies(s):
            steps.append(run)
    # When no filter that runs on this call comes before the last fixed run (no decision for the
    # phrase, no head word), the first fixed reason is the one the list gives: kept from `decide`.
    last_fixed = max(n for n, step in enumerate(steps) if isinstance(step, int))
    after: list[Filter] = [step for step in steps[last_fixed:] if not isinstance(step, int)]
    plain = len(after) == len(steps) - fixed
    kept: list[tuple[Candidate, Decided]] = []
    dropped: list[tuple[Candidate, Decided, DropReason]] = []
    for c, d in zip(found, decided, strict=True):
        if s.kept >= s.slots and not explain:
            break  # nothing more can be kept, and nobody asked why not
        reason = d.first if plain else _reason(steps, c, d, s)
        if reason is None and plain:
            for f in after:
                if f.test(c, d.facts, d.relation, s):  # type: ignore[misc]
                    reason = f.reason
                    break
        if reason is not None:
            if explain:
                dropped.append((c, d, reason))
            continue
        kept.append((c, d))
        s.taken.add(d.facts.spelling)
        s.kept += 1
    return kept, dropped


def _reason(steps: Sequence[int | Filter], c: Candidate, d: Decided, s: Situation) -> DropReason | None:
    """The first reason in the list that holds for one candidate: a fixed run's kept reason, or a
    filter tested on this call."""
    for step in steps:
        if isinstance(step, int):
            if d.reasons[step] is not None:
                return d.reasons[step]
        elif step.test(c, d.facts, d.relation, s):  # type: ignore[misc]
            return step.reason
    return None


def query_contexts(lex: Lexicon, spans: Sequence[Span]) -> list[QueryContext]:
    """Each span's `QueryContext`; the words of the query's job spans are worked out once."""
    jobs = [p for p in spans if p.kind in JOBS]
    words = frozenset(w for p in jobs for w in p.key.split(PHRASE_JOINER))
    plain = QueryContext(words, False, None)
    out = []
    for s, span in enumerate(spans):
        beside = [spans[n] for n in (s - 1, s + 1) if 0 <= n < len(spans)]
        head = PHRASE_JOINER not in span.key and span.kind in JOBS and any(p.kind in JOBS for p in beside)
        if not head:
            out.append(plain)
            continue
        whole = None
        known = [lex.index[w] for p in jobs for w in ([p.key] if p.key in lex.index else p.parts)]
        if len(known) > 1:
            mean = np.asarray(lex.normed[known]).mean(axis=0)
            whole = (mean / (np.linalg.norm(mean) or 1.0)).astype(np.float32)
        out.append(QueryContext(words, True, whole))
    return out
