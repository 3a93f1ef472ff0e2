"""The expansion core: a seeker's query becomes weighted neighbour phrases and query text.

Plain functions over a loaded bundle (`Lexicon`), what is kept of it (`ExpansionCache`) and a
snapshot of the reviewer decisions; no HTTP, no globals, no I/O. The CLI, the service, the review
page, the gate and `widen evaluate` all call `expand` and show the `ExpansionResult` it returns.

A query passes through each stage once, in order:

1. segmentation (`segment`): the query's words as spans, each with its kind;
2. candidates (`candidates`): for each job span, where to look for its other names;
3. filters (`filters`): which candidates the span keeps, and why each other one is dropped;
4. weights (`weights`): each clause's weight, corrections, pattern spellings, the clause budget;
5. the result (`result`): segments and clauses;
6. the query text (`query_text`): `query_text` and `full_query` in the engine's syntax, with the
   concept clauses (`concept_clauses`) where the option is on.

How alike two titles are decides the relation hint: two titles whose duties are as alike as one
title's own two halves are in this bundle are `equivalent`; less alike, `related`; much less,
dropped (`widen.expansion.candidates.relation_of`).
"""

from __future__ import annotations

from collections.abc import Sequence

from widen.decisions.decision import DecisionSet, PhraseDecisions
from widen.expansion.cache import AloneKey, Answer, DecidedKey, ExpansionCache, SpanKey, SpanOutcome
from widen.expansion.candidates import find_candidates, span_vector
from widen.expansion.context import QueryContext, query_contexts
from widen.expansion.filters import Situation, decide, sift
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.pieces import finished, from_pieces
from widen.expansion.query_text import JOBS, merged_text, render, segments_baseline, segments_words
from widen.expansion.result import Clause, Dropped, Expansion, ExpansionResult, Segment
from widen.expansion.segment import Span, segment_query
from widen.expansion.weights import corrected, correction, pattern_spellings, pinned, weighed, within_budget
from widen.text.forms import PHRASE_JOINER, phrase_of_key, spelling_key

__all__ = ["expand", "prepare"]

_NOTHING = SpanOutcome((), ())


def expand(
    lexicon: Lexicon,
    decisions: DecisionSet,
    query: str,
    options: ExpansionOptions,
    *,
    explain: bool = False,
    cache: ExpansionCache | None = None,
) -> ExpansionResult:
    """Expand a query with the bundle `lexicon` and the reviewer decisions; `explain` keeps every drop and
    why. `cache` is what is kept of this lexicon between calls (a new one when None: nothing kept)."""
    if cache is None:
        cache = ExpansionCache(lexicon)
    elif cache.version != lexicon.version:
        raise ValueError(f"the cache is for bundle {cache.version}, not {lexicon.version}")
    longest = max(min(options.max_words, lexicon.max_words), lexicon.longest_title)
    spans = segment_query(query, lexicon.phraser, cache.vocabulary(options), longest, options.max_tokens)
    alone = _alone(lexicon, decisions, spans, options, explain)
    if alone is not None:
        made = cache.alone.get(alone)
        if made is not None:  # a known phrase alone, as typed, no decision for it: worked out before
            return _result(lexicon, cache, query, made)
    contexts = query_contexts(lexicon, spans)
    expanded: list[tuple[list[Expansion], list[Dropped]]] = []
    # Each span's expansions as kept, while every span keeps them as they are (no correction, nothing
    # to explain): then the answer is joined from the spans' pieces (`widen.expansion.pieces`).
    own: list[tuple[Expansion, ...]] | None = [] if cache.keep_answers and not explain else None
    for span, context in zip(spans, contexts, strict=True):
        fix, refused = correction(span, decisions, options)
        if refused is not None:  # a blocked correction: the typed words stand alone
            expanded.append(([], [refused] if explain else []))
            own = None
            continue
        outcome = _span_outcome(lexicon, cache, span, decisions, options, explain, context)
        sides = pattern_spellings(cache, span, options)  # a pattern's; no job span has any
        if own is not None:
            own = [*own, outcome.kept or sides] if fix is None else None
        kept = corrected(fix, outcome.kept) if fix is not None else list(outcome.kept)
        expanded.append((kept + list(sides), list(outcome.dropped)))
    blocked = frozenset().union(
        *(decisions.get(s.typed or phrase_of_key(s.key)).blocked for s in spans if s.kind in JOBS)
    )
    joined = None if own is None else from_pieces(lexicon, cache, spans, own, options, blocked)
    answer = joined or _answer(lexicon, spans, expanded, options, explain, blocked)
    if alone is not None:
        cache.alone.keep(alone, answer)
    return _result(lexicon, cache, query, answer)


def _span_outcome(
    lex: Lexicon,
    cache: ExpansionCache,
    span: Span,
    decisions: DecisionSet,
    options: ExpansionOptions,
    explain: bool,
    context: QueryContext,
) -> SpanOutcome:
    """A job span's candidates, filtered and weighed (its correction aside). A known entry, or a span
    composed of known parts, that no reviewer decided anything for expands the same way in every query
    but for what its filters read of the query around it: nothing, unless it is a head word beside
    another job, and then the query's job spans (`QueryContext.jobs`). Kept once per span and those
    (`cache.spans`)."""
    if span.kind not in JOBS or (span.kind == "unknown" and not span.parts):
        return _NOTHING
    said = decisions.get(span.typed or phrase_of_key(span.key))
    if said.blocked or said.pinned or said.exempt:
        return _work_out(lex, cache, span, said, options, explain, context)
    key: SpanKey = (span.key, span.parts, options, explain, context.jobs)
    known = cache.spans.get(key)
    if known is None:
        known = cache.spans.keep(key, _work_out(lex, cache, span, said, options, explain, context))
        if not context.head and not explain:
            # Alike in every query: the outcome kept is all a query asks again, so its candidates and
            # filters are let go (tens of objects each that the collector would walk; prepare does so too).
            cache.let_go(span.key, options)
    return known


def _work_out(
    lex: Lexicon,
    cache: ExpansionCache,
    span: Span,
    said: PhraseDecisions,
    options: ExpansionOptions,
    explain: bool,
    context: QueryContext,
) -> SpanOutcome:
    """Stages 2 to 4 for one span: candidates, filters, weights."""
    text = phrase_of_key(span.key)
    found = find_candidates(lex, cache, span, options)
    if said.exempt:
        drops = tuple(
            Dropped(phrase=phrase_of_key(c.key), similarity=round(c.similarity, 4), reason="exempt")
            for c in found.candidates
        )
        return SpanOutcome((), drops if explain else ())
    stop = frozenset(options.noise_words)
    pins = pinned(lex, said, span_vector(lex, span))
    if found.source == "model":  # what the bundle and the options alone decide: kept once
        key: DecidedKey = (span.key, options)
        decided = cache.decided.get(key)
        if decided is None:
            decided = cache.decided.keep(
                key, decide(lex, cache, text, found.candidates, found.own_share, found.own_postings, options)
            )
    else:
        decided = decide(lex, cache, text, found.candidates, found.own_share, found.own_postings, options)
    situation = Situation(
        lex,
        options,
        said,
        frozenset(e.phrase for e in pins),
        context,
        frozenset(text.split(" ")) - stop,
        max(options.max_per_segment - len(pins), 0),
        {spelling_key(text, stop)} | {spelling_key(e.phrase, stop) for e in pins},
    )
    kept, dropped = sift(found.candidates, decided, situation, explain)
    drops = tuple(
        Dropped.model_construct(
            phrase=d.facts.phrase,
            similarity=round(c.similarity, 4),
            reason=reason,
            relation=d.relation,
            duties=None if c.duties is None or c.duties < -0.5 else round(c.duties, 4),
        )
        for c, d, reason in dropped
    )
    return SpanOutcome(tuple(pins + weighed(kept, found.source, options)), drops)


def _answer(
    lex: Lexicon,
    spans: Sequence[Span],
    expanded: Sequence[tuple[list[Expansion], list[Dropped]]],
    options: ExpansionOptions,
    explain: bool,
    blocked: frozenset[str] = frozenset(),
) -> Answer:
    """Stages 5 and 6: the segments and clauses within the clause budget, and the query text (with the
    concept clauses, but those in `blocked`)."""
    originals = {span.typed or phrase_of_key(span.key) for span in spans if span.kind != "noise"}
    keep = within_budget([kept for kept, _ in expanded], len(originals), options)
    boost = options.boost_scale
    segments: list[Segment] = []
    clauses: list[Clause] = []
    emitted: set[str] = set()
    for s, (span, (kept, dropped)) in enumerate(zip(spans, expanded, strict=True)):
        final, over = [], []
        for n, e in enumerate(kept):
            if e.phrase in originals or e.phrase in emitted:
                over.append(
                    Dropped(phrase=e.phrase, similarity=e.similarity, reason="duplicate_clause", relation=e.relation)
                )
            elif (s, n) not in keep:
                over.append(
                    Dropped(phrase=e.phrase, similarity=e.similarity, reason="max_clauses", relation=e.relation)
                )
            else:
                final.append(e)
                emitted.add(e.phrase)
        typed = span.typed or phrase_of_key(span.key)
        segments.append(
            Segment.built(  # built from values already checked: no validation per query
                text=typed,
                kind=span.kind,  # type: ignore[arg-type]
                field=span.field,
                pattern=span.pattern,
                corrected=phrase_of_key(span.key) if span.typed else None,
                expansions=final,
                dropped=(dropped + over) if explain else None,
            )
        )
        if span.kind == "noise":
            continue  # names no job: no clause
        if typed not in emitted:  # a word typed twice is one clause
            emitted.add(typed)
            clauses.append(Clause.built(phrase=typed, weight=round(boost, 4), original=True, segment=s))
        clauses.extend(
            Clause.built(phrase=e.phrase, weight=round(e.weight * boost, 4), original=False, segment=s) for e in final
        )
    query_text = render(clauses, segments, options, lex.names)
    full = merged_text(segments_baseline(segments), query_text, words=segments_words(segments))
    return finished(lex, spans, segments, clauses, query_text, full, options, blocked)


def _result(lex: Lexicon, cache: ExpansionCache, query: str, answer: Answer) -> ExpansionResult:
    return ExpansionResult.built(
        query=query,
        model=cache.model_info,
        segments=answer.segments,
        clauses=answer.clauses,
        query_text=answer.query_text,
        full_query=answer.full_query,
        concepts=list(answer.concepts),
        concept_text=answer.concept_text,
    )


def _alone(
    lex: Lexicon, decisions: DecisionSet, spans: Sequence[Span], options: ExpansionOptions, explain: bool
) -> AloneKey | None:
    """The key of a query that is one known entry alone, spelled right, with no reviewer decision for it
    and nobody asking why: its whole answer but the echoed query depends on the bundle and the options
    alone. None for any other query."""
    if explain or len(spans) != 1:
        return None
    span = spans[0]
    if span.kind not in ("phrase", "term") or span.typed or span.parts:
        return None
    if span.key not in lex.index and span.key not in lex.title_row:
        return None
    said = decisions.get(phrase_of_key(span.key))
    if said.blocked or said.pinned or said.exempt:
        return None
    return (span.key, options)


def prepare(lex: Lexicon, cache: ExpansionCache, options: ExpansionOptions, limit: int | None = None) -> int:
    """Work out, for the entries and titles of the bundle, how each expands on its own under `options`
    with no reviewer decision for it (what most spans of most queries are), so that no query pays for
    that the first time: the long tail of a day's queries is mostly first times. Only that outcome is
    kept (a few expansions an entry), with the whole answer to the entry typed alone; the candidates
    and filters it came from are let go again. With `limit`, only the first `limit` of
    `Lexicon.busiest`; the others are worked out on first use, to the same answers. Returns the number
    prepared."""
    none, alone = DecisionSet(), QueryContext(frozenset(), False, None)
    keys = lex.busiest()[:limit]
    for key in keys:
        span = Span(key, "phrase" if PHRASE_JOINER in key else "term")
        _span_outcome(lex, cache, span, none, options, False, alone)
        # And the whole answer to the entry typed alone, where it segments as itself.
        expand(lex, none, phrase_of_key(key), options, cache=cache)
        cache.let_go(key, options)
    return len(keys)
