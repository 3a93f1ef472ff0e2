"""RM3 pseudo-relevance feedback: the peer method a search team would otherwise switch on.

The relevance model (Lavrenko & Croft 2001, "Relevance-Based Language Models") estimates
P(w|R) from the first `fb_docs` postings of the plain query, each weighted by its retrieval
score; RM3 (Abdul-Jaleel et al. 2004, "UMass at TREC 2004: Novelty and HARD") keeps its
`fb_terms` most likely terms and interpolates them with the original query,
P'(w) = lambda P(w|Q) + (1 - lambda) P(w|R), lambda the original-query weight. Terms are the
engine's own (tantivy's English stemming); stop words (the engine's English list) are not fed
back. The defaults, 10 feedback postings, 10 terms and an original-query weight of 0.5, are the
values commonly used for RM3 (from memory).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass

import tantivy

from widen.evaluation.index import TITLE_BOOST, SearchIndex

__all__ = ["RM3"]

_FEEDBACK = (
    tantivy.TextAnalyzerBuilder(tantivy.Tokenizer.simple())
    .filter(tantivy.Filter.remove_long(40))
    .filter(tantivy.Filter.lowercase())
    .filter(tantivy.Filter.stopword("english"))
    .filter(tantivy.Filter.stemmer("english"))
    .build()
)


@dataclass(frozen=True)
class RM3:
    """Parameters: `fb_docs` feedback postings, `fb_terms` expansion terms, `original_weight` (lambda)."""

    fb_docs: int = 10
    fb_terms: int = 10
    original_weight: float = 0.5

    def model(self, index: SearchIndex, query: tantivy.Query, query_text: str) -> dict[str, float]:
        """The interpolated query model P'(w) over the engine's terms; empty when nothing is retrieved."""
        feedback = [(s, t) for s, t in index.texts(query, self.fb_docs) if s > 0]
        original = Counter(index.analyse(query_text))
        if not feedback or not original:
            return {}
        # P(D|Q) by each posting's share of the retrieval scores (common practice with BM25, no source).
        total = sum(score for score, _ in feedback)
        relevance: dict[str, float] = {}
        for score, text in feedback:
            terms = [t for t in _FEEDBACK.analyze(text) if len(t) > 1 and not t.isdigit()]
            if not terms:
                continue
            for term, n in Counter(terms).items():
                relevance[term] = relevance.get(term, 0.0) + (score / total) * n / len(terms)  # P(w|D) P(D|Q)
        top = sorted(relevance.items(), key=lambda kv: (-kv[1], kv[0]))[: self.fb_terms]
        mass = sum(p for _, p in top) or 1.0
        size = sum(original.values())
        weights = {t: self.original_weight * n / size for t, n in original.items()}
        for term, p in top:
            weights[term] = weights.get(term, 0.0) + (1.0 - self.original_weight) * p / mass
        return weights

    def query(self, index: SearchIndex, query: tantivy.Query, query_text: str) -> tantivy.Query | None:
        """The RM3 query: every term of the model, boosted by its weight, over title (boosted) and description."""
        weights = self.model(index, query, query_text)
        if not weights:
            return None
        should = tantivy.Occur.Should
        clauses = []
        for term, weight in sorted(weights.items()):
            fields = tantivy.Query.boolean_query(
                [
                    (should, tantivy.Query.boost_query(index.term("title", term), TITLE_BOOST)),
                    (should, index.term("description", term)),
                ]
            )
            clauses.append((should, tantivy.Query.boost_query(fields, weight)))
        return tantivy.Query.boolean_query(clauses)
