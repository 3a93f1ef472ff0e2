"""How much each clause weighs: expansions, reviewers' pins, spelling corrections, pattern spellings, and
which expansions the query's clause budget keeps.

The seeker's own words always weigh most (1, times the options' scale); an expansion weighs
`max_expansion_weight` x ((1 + s) / 2)^4 for closeness s (the duties cosine where both titles have
a profile, else the input cosine), so it rises with s and never reaches the original; a related
neighbour weighs `related_factor` of an equivalent one. A correction weighs `spelling_weight` of the
seeker's word and scales the expansions of the corrected words by the same; another spelling of a
shift pattern weighs `pattern_weight`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import numpy.typing as npt

from widen.decisions.decision import DecisionSet, PhraseDecisions
from widen.expansion.cache import ExpansionCache, SidesKey
from widen.expansion.candidates import Candidate
from widen.expansion.filters import Decided
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import Dropped, Expansion
from widen.expansion.segment import Span
from widen.text.forms import key_of_phrase, phrase_of_key

__all__ = ["weight_for", "weighed", "pinned", "correction", "pattern_spellings", "within_budget"]


def weight_for(similarity: float, options: ExpansionOptions) -> float:
    """Rises with similarity and stays below max_expansion_weight (< 1): ((1 + s) / 2) ** 4."""
    s = min(max(similarity, -0.999), 0.999)
    return options.max_expansion_weight * ((1.0 + s) / 2.0) ** 4


def weighed(kept: Sequence[tuple[Candidate, Decided]], source: str, options: ExpansionOptions) -> list[Expansion]:
    """The kept candidates as expansions, each with its weight."""
    out = []
    for c, d in kept:
        closeness = c.duties if c.duties is not None else c.similarity
        weight = weight_for(closeness, options) * (options.related_factor if d.relation == "related" else 1.0)
        out.append(
            Expansion.model_construct(
                phrase=d.facts.phrase,
                similarity=round(c.similarity, 4),
                weight=round(max(weight, 1e-4), 4),
                relation=d.relation,
                source="duties" if c.duties is not None and source == "model" else source,
                duties=None if c.duties is None else round(c.duties, 4),
            )
        )
    return out


def pinned(lex: Lexicon, said: PhraseDecisions, vector: npt.NDArray[np.float32] | None) -> list[Expansion]:
    """The neighbours a reviewer pinned to the phrase, with the weights they gave."""
    kept = []
    for phrase, weight in said.pinned:
        j = lex.index.get(key_of_phrase(phrase))
        similarity = 0.0 if j is None or vector is None else float(np.asarray(lex.normed[j]) @ vector)
        kept.append(
            Expansion(
                phrase=phrase,
                similarity=round(similarity, 4),
                weight=round(weight, 4),
                relation="equivalent",
                source="pinned",
            )
        )
    return kept


def correction(
    span: Span, decisions: DecisionSet, options: ExpansionOptions
) -> tuple[Expansion | None, Dropped | None]:
    """The spelling correction of a span the seeker mistyped, unless a reviewer blocked it."""
    if not span.typed or span.kind == "noise":
        return None, None
    corrected = phrase_of_key(span.key)
    if corrected in decisions.get(span.typed).blocked:
        return None, Dropped(phrase=corrected, similarity=1.0, reason="blocked")
    fixed = Expansion(
        phrase=corrected,
        similarity=1.0,
        weight=round(options.spelling_weight, 4),
        relation="equivalent",
        source="spelling",
    )
    return fixed, None


def corrected(fix: Expansion, expansions: Sequence[Expansion]) -> list[Expansion]:
    """The correction first, then the corrected words' expansions, each scaled by the correction's weight."""
    scale = fix.weight
    return [fix] + [e.model_copy(update={"weight": round(max(e.weight * scale, 1e-4), 4)}) for e in expansions]


def pattern_spellings(cache: ExpansionCache, span: Span, options: ExpansionOptions) -> tuple[Expansion, ...]:
    """A shift pattern's other spellings that the dump uses, as kept (one tuple per pattern, spelling and
    options); nothing for other kinds."""
    if span.kind != "pattern" or span.pattern is None:
        return ()
    own = phrase_of_key(span.key)
    key: SidesKey = (span.pattern, own, options)
    made = cache.sides.get(key)
    if made is None:
        spellings = [s for s in cache.used_spellings(span.pattern, options) if s != own][: options.max_per_segment]
        weight = round(options.pattern_weight, 4)
        made = cache.sides.keep(
            key,
            tuple(
                Expansion(phrase=s, similarity=1.0, weight=weight, relation="equivalent", source="pattern")
                for s in spellings
            ),
        )
    return made


def within_budget(
    expanded: Sequence[Sequence[Expansion]], originals: int, options: ExpansionOptions
) -> set[tuple[int, int]]:
    """Which expansions the clause budget keeps, as (span, position): over `max_clauses`, the lightest
    go first; every original stays."""
    budget = max(options.max_clauses - originals, 0)
    ranked = sorted(
        ((e.weight, s, n) for s, kept in enumerate(expanded) for n, e in enumerate(kept)),
        key=lambda t: (-t[0], t[1], t[2]),
    )
    return {(s, n) for _, s, n in ranked[:budget]}
