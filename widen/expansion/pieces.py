"""An answer put together from its spans' pieces, each worked out once per span, position and options.

Most queries of a day are ones never seen before, but made of spans seen many times: a title, a
town, a shift pattern, a noise word ("temp sous chef marrow quay"). What a span adds to an answer
(its segment, its clauses, its group of the query text, its terms of the baseline and of the
words) depends on the span, its position in the query (each clause names its segment), the
options and the expansions it keeps, and on nothing else as long as no two spans of the query
reach for the same phrase and the query's clauses fit its budget. Then the answer is its pieces
joined, byte for byte what stages 5 and 6 write (`widen.expansion.expand._answer`; the tests
compare the two on whole query logs). A piece is kept with the expansions it was made from and is
used only while the span still keeps those very expansions (the same tuple: a reviewer's decision
or a correction makes a new one), so nothing a piece holds is ever out of date.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import NamedTuple

from widen.expansion.cache import Answer, ExpansionCache
from widen.expansion.concept_clauses import concept_clauses, concept_text
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import baseline_term, group_text, merged_text, words_terms
from widen.expansion.result import Clause, Expansion, Segment
from widen.expansion.segment import Span
from widen.text.forms import phrase_of_key

__all__ = ["Piece", "from_pieces", "finished"]


class Piece(NamedTuple):
    """What one span at one position adds to an answer, and the expansions it was made from."""

    kept: tuple[Expansion, ...]
    segment: Segment
    clauses: tuple[Clause, ...]
    group: str  # its group of query_text; "" for none
    baseline: str  # its term of the baseline; "" for none
    words: str  # its words as optional terms; "" for none
    phrases: frozenset[str]  # the phrases of its expansions


def _piece(lex: Lexicon, span: Span, s: int, kept: tuple[Expansion, ...], options: ExpansionOptions) -> Piece:
    typed = span.typed or phrase_of_key(span.key)
    segment = Segment.built(
        text=typed,
        kind=span.kind,
        field=span.field,
        pattern=span.pattern,
        corrected=phrase_of_key(span.key) if span.typed else None,
        expansions=list(kept),
        dropped=None,
    )
    clauses: tuple[Clause, ...] = ()
    if span.kind != "noise":  # names no job: no clause
        b = options.boost_scale
        clauses = (
            Clause.built(phrase=typed, weight=round(b, 4), original=True, segment=s),
            *(Clause.built(phrase=e.phrase, weight=round(e.weight * b, 4), original=False, segment=s) for e in kept),
        )
    group = group_text(clauses, segment, options, lex.names) if clauses else ""
    phrases = frozenset(e.phrase for e in kept)
    return Piece(kept, segment, clauses, group, baseline_term(typed), words_terms(typed), phrases)


def from_pieces(
    lex: Lexicon,
    cache: ExpansionCache,
    spans: Sequence[Span],
    kept: Sequence[tuple[Expansion, ...]],
    options: ExpansionOptions,
    blocked: frozenset[str],
) -> Answer | None:
    """The answer to a query whose spans keep `kept`, joined from their pieces; None where the spans'
    answers meet (a phrase twice, a word typed twice, clauses over the budget) and the answer must be
    worked out as a whole."""
    pieces = []
    originals: set[str] = set()
    phrases: set[str] = set()
    named = expansions = 0
    for s, (span, own) in enumerate(zip(spans, kept, strict=True)):
        key = (span, s, options)
        piece = cache.pieces.get(key)
        if piece is None or piece.kept is not own:
            piece = cache.pieces.keep(key, _piece(lex, span, s, own, options))
        pieces.append(piece)
        if span.kind != "noise":
            named += 1
            originals.add(piece.segment.text)
        expansions += len(own)
        phrases |= piece.phrases
    if (
        named != len(originals)
        or expansions != len(phrases)
        or expansions > max(options.max_clauses - len(originals), 0)
        or not originals.isdisjoint(phrases)
    ):
        return None
    segments = [p.segment for p in pieces]
    clauses = [c for p in pieces for c in p.clauses]
    query_text = " ".join(p.group for p in pieces if p.group)
    baseline = " AND ".join(p.baseline for p in pieces if p.baseline)
    full = merged_text(baseline, query_text, words=" ".join(p.words for p in pieces if p.words))
    return finished(lex, spans, segments, clauses, query_text, full, options, blocked)


def finished(
    lex: Lexicon,
    spans: Sequence[Span],
    segments: list[Segment],
    clauses: list[Clause],
    query_text: str,
    full: str,
    options: ExpansionOptions,
    blocked: frozenset[str],
) -> Answer:
    """The answer with the concept clauses, but those in `blocked`, where the option is on."""
    concepts = concept_clauses(lex, spans, clauses, blocked, options)
    if not concepts:
        return Answer(segments, clauses, query_text, full)
    alone = concept_text(concepts, options)
    # query_text: the concepts only rank what its required groups match; full_query: they also find.
    return Answer(segments, clauses, f"{query_text} ({alone})", f"{full} OR ({alone})", tuple(concepts), alone)
