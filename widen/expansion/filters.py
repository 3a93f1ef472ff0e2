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
from typing import NamedTuple

from widen.decisions.decision import PhraseDecisions
from widen.expansion.cache import ExpansionCache
from widen.expansion.candidates import Candidate, relation_of
from widen.expansion.context import QueryContext
from widen.expansion.ground import Ground, ground
from widen.expansion.lexicon import EntryFacts, Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import DropReason

__all__ = ["FILTERS", "Filter", "Decided", "Ground", "Situation", "QueryContext", "decide", "sift"]


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
    if whole is None:
        return False
    vector = s.lexicon.normed[c.entry] if c.entry >= 0 else s.lexicon.words_vector(c.key)
    return vector is None or float(vector @ whole) < s.options.min_similarity


#: Every filter, in the order they are tried.
FILTERS: tuple[Filter, ...] = (
    Filter("protected", fixed=lambda c, e, g: e.protected),
    Filter("number_or_stop_word", fixed=lambda c, e, g: e.junk),
    Filter("below_min_similarity", fixed=lambda c, e, g: c.duties is None and c.similarity < g.options.min_similarity),
    Filter("like_different_jobs", fixed=lambda c, e, g: c.duties is None and c.similarity < g.apart),
    Filter("blocked", test=lambda c, e, r, s: e.phrase in s.said.blocked, applies=lambda s: bool(s.said.blocked)),
    Filter("pinned", test=lambda c, e, r, s: e.phrase in s.pinned, applies=lambda s: bool(s.pinned)),
    Filter("same_as_original", fixed=lambda c, e, g: e.spelling == g.own_spelling),
    # A title seen in a posting or two whose word the dump never uses often enough to know, and that is
    # a slip away from a word it does ("nursing assiistant", "temmporary"): a typo in the title.
    Filter("misspelled", fixed=lambda c, e, g: c.entry < 0 and g.misspelled(c.key)),
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
    Filter(
        "different_duties",
        fixed=lambda c, e, g: c.duties is not None and c.duties < g.options.related_duties * g.same_job(c),
    ),
    # A cosine no higher than two different jobs reach by chance at these sizes is no evidence at all:
    # a title seen in one posting and one seen in two share little, and widen abstains.
    Filter("weak_evidence", fixed=lambda c, e, g: c.duties is not None and c.duties < g.by_chance(c)),
    # In a bundle with duties profiles, a neighbour with no profile of its own is no title the dump
    # posts often enough to tell its duties: a word of the postings' text ("hold", "category" for
    # "driver"), not another name for a job. A title with a profile is compared by duties.
    Filter("not_a_title", fixed=lambda c, e, g: g.titled and c.duties is None and c.postings == 0),
    # A title with another head word names another job ("animal physiotherapist" is a physiotherapist,
    # never a butcher) unless the two titles' duties say they are one: without duties, no.
    Filter("other_head", fixed=lambda c, e, g: g.titled and c.duties is None and e.head != g.own_head),
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
#: Each fixed run as its tests and reasons, as `decide` reads them.
_FIXED_RUNS = tuple(tuple((f.fixed, f.reason) for f in r if f.fixed is not None) for r in _RUNS if isinstance(r, tuple))


class Decided(NamedTuple):
    """What the fixed filters decide of one candidate: its facts, its relation hint, per fixed run the
    first reason that holds (None: none does), and the first of those (`first`). The runs after the
    first that holds are not tried (None): the list is read in order, so nothing reads them."""

    facts: EntryFacts
    relation: str
    reasons: tuple[DropReason | None, ...]
    first: DropReason | None


def _stems(words: frozenset[str]) -> frozenset[str]:
    """Words cut to their first five letters: "finance" and "financial" are one word here."""
    return frozenset(w[:5] for w in words)


def _other_kind(own: frozenset[str], other: frozenset[str], own_head: str, other_head: str) -> bool:
    """Two titles with one head word and more words in common, each with words the other lacks, name two
    kinds of that job ("import manager in hardware", "import manager in sugar"): however alike their
    duties, the second is at most related. Two names sharing only the head ("staff nurse", "registered
    nurse") are two names, judged by their duties."""
    if own_head != other_head:
        return False
    a, b = _stems(own), _stems(other)
    return bool(a - b) and bool(b - a) and len(a & b) >= 2


#: A candidate's reasons when the run at that position is the first that holds.
_UNTRIED = tuple((None,) * n for n in range(len(_FIXED_RUNS)))


def _fixed_reasons(c: Candidate, e: EntryFacts, g: Ground) -> tuple[DropReason | None, ...]:
    """Per fixed run, the first reason that holds for one candidate (None: none does), up to the first
    run where one does."""
    for n, run in enumerate(_FIXED_RUNS):
        for test, reason in run:
            if test(c, e, g):
                return (*_UNTRIED[n], reason, *_UNTRIED[len(_FIXED_RUNS) - n - 1])
    return _UNTRIED[-1] + (None,)


def decide(
    lex: Lexicon,
    cache: ExpansionCache,
    text: str,
    found: Sequence[Candidate],
    own_share: float,
    own_postings: int,
    options: ExpansionOptions,
) -> tuple[Decided, ...]:
    """The fixed filters for each candidate of the span `text`, in `found`'s order."""
    g = ground(lex, cache, text, own_share, own_postings, options)
    stop = frozenset(options.noise_words)
    out = []
    entry, share = cache.entry, options.title_share
    for c in found:
        e = entry(c.key, stop, share)
        reasons = _fixed_reasons(c, e, g)
        first = next((r for r in reasons if r is not None), None)  # the last run's, or None
        relation = relation_of(c, lex, options, own_postings, g.same_job(c) if c.duties is not None else None)
        if relation == "equivalent" and _other_kind(g.own_core, e.content - g.modifiers, g.own_head, e.head):
            relation = "related"
        out.append(Decided(e, relation, reasons, first))
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
