"""Concept clauses: the concepts nearest a query, as boosted clauses on the index's concept field.

The query's job words (its job segments' entries, or their words where a segment is no entry) are
read as the title of a posting and turned into a vector with the bundle's own recipe
(`widen.model.concepts`); the `concept_nearest` concepts of each size closest to it become clauses
`concepts:"wc512n17"^w`, w = `concept_scale` x the size's weight (`concept_weights`, coarse to fine) x
the cosine, capped below every clause of the seeker's words and their expansions. A concept a
reviewer blocked for one of the query's job phrases is left out.
"""

from __future__ import annotations

from collections.abc import Sequence

from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import JOBS, quoted
from widen.expansion.result import Clause, ConceptClause
from widen.expansion.segment import Span
from widen.model.concepts import nearest
from widen.text.forms import PHRASE_JOINER

__all__ = ["concept_clauses", "concept_text", "CAP"]

#: A concept clause weighs at most this share of the lightest clause of the seeker's words and expansions.
CAP = 0.9


def _job_rows(lex: Lexicon, spans: Sequence[Span]) -> list[int]:
    assert lex.posting_vectors is not None
    keys: list[str] = []
    for span in spans:
        if span.kind not in JOBS:
            continue
        keys.extend([span.key] if span.key in lex.index else span.key.split(PHRASE_JOINER))
    return lex.posting_vectors.rows_of(keys)


def concept_clauses(
    lex: Lexicon, spans: Sequence[Span], clauses: Sequence[Clause], blocked: frozenset[str], options: ExpansionOptions
) -> list[ConceptClause]:
    """The concept clauses of a query (none when the option is off or the bundle has no concepts)."""
    concepts = lex.concepts
    if not options.concepts or concepts is None or lex.posting_vectors is None:
        return []
    rows = _job_rows(lex, spans)
    if not rows:
        return []
    vector = lex.posting_vectors.of_rows(rows)
    lightest = min((c.weight for c in clauses), default=options.boost_scale)
    cap = CAP * lightest
    out = []
    for n, size in enumerate(concepts.sizes):
        factor = options.concept_weights[min(n, len(options.concept_weights) - 1)]
        for local, similarity in nearest(concepts, vector, n, options.concept_nearest):
            token = concepts.token(n, local)
            if similarity < options.concept_min_similarity or token in blocked:
                continue
            weight = min(options.concept_scale * factor * similarity * options.boost_scale, cap)
            label = concepts.labels[concepts.offsets[n] + local]
            out.append(
                ConceptClause.built(
                    token=token, size=size, similarity=round(similarity, 4), weight=round(weight, 4), label=label
                )
            )
    return out


def concept_text(found: Sequence[ConceptClause], options: ExpansionOptions) -> str:
    """The concept clauses alone, OR'ed, on the concept field."""
    return " OR ".join(f"{options.concept_field}:{quoted(c.token)}^{c.weight:g}" for c in found)
