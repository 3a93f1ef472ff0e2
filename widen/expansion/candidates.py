"""A span's candidate neighbours: where expansion looks for a job's other names.

The candidates of a known entry are the skip-gram table's first `candidates` and the titles whose
duties are most alike (`training.duties`), closest first; a quoted span the corpus never formed is
searched with its parts' mean vector (source `composed`). They depend on the bundle alone, so a
known entry's are worked out once (`ExpansionCache.candidates`).

Each candidate carries what the filters and the relation hint read: its input cosine to the span,
its input-output cosine (the dual embedding space idea: Mitra et al. 2016, "A Dual Embedding Space
Model for Document Ranking"; Nalisnick et al. 2016: input-input says two phrases are used the same
way, input-output that they are used together), how often it is a title, and the cosine of the two
titles' duties profiles where both have one.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import numpy.typing as npt

from widen.expansion.cache import CandidatesKey, ExpansionCache
from widen.expansion.lexicon import Lexicon, head_of
from widen.expansion.options import ExpansionOptions
from widen.expansion.segment import Span
from widen.model.neighbours import top_k_for_vector
from widen.text.forms import phrase_of_key

__all__ = ["Candidate", "Found", "find_candidates", "relation_of", "span_vector"]


class Candidate(NamedTuple):
    """One neighbour of a span, and what the filters and the relation hint read of it."""

    key: str
    entry: int  # its vocabulary row; -1 for a title seen too seldom to have a vector
    similarity: float  # cosine of the input vectors (a title without one: the mean of its known words')
    in_out_similarity: float  # input-output cosine, both directions averaged; 0 without vectors
    title_share: float
    duties: float | None  # cosine of the duties profiles; -1.0 when both have one and they are not close
    postings: int  # how many postings name it as their title (0: no title with a profile)


@dataclass(frozen=True)
class Found:
    """A span's candidates, closest first; the source to report; the span's own title share and how many
    postings name it as their title."""

    candidates: tuple[Candidate, ...]
    source: str  # model (a known entry or title) or composed
    own_share: float
    own_postings: int


def span_vector(lex: Lexicon, span: Span) -> npt.NDArray[np.float32] | None:
    """The unit input vector of a known entry, or the normalised mean of a composed span's parts (or of a
    title's known words, for a title with no vector); None when nothing of it is known."""
    if not span.parts:
        j = lex.index.get(span.key)
        if j is None:
            return lex.words_vector(span.key)
        known: npt.NDArray[np.float32] = np.asarray(lex.normed[j])
        return known
    rows = [lex.index[p] for p in span.parts if p in lex.index]
    if not rows:  # parts that are titles seen too seldom to have vectors: their words
        return lex.words_vector(span.key)
    mean = np.asarray(lex.normed[rows]).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    composed: npt.NDArray[np.float32] = (mean / norm if norm else mean).astype(np.float32)
    return composed


def find_candidates(lex: Lexicon, cache: ExpansionCache, span: Span, options: ExpansionOptions) -> Found:
    """Neighbours of a known entry or title (the precomputed tables, kept) or of a composed vector (exact
    search)."""
    if span.parts:
        return _composed_candidates(lex, cache, span, options)
    key: CandidatesKey = (span.key, options.candidates)
    kept = cache.candidates.get(key)
    if kept is None:
        kept = cache.candidates.keep(key, _known_candidates(lex, cache, span, options))
    return Found(kept, "model", lex.share_of(span.key), lex.postings_of(span.key))


def _composed_candidates(lex: Lexicon, cache: ExpansionCache, span: Span, options: ExpansionOptions) -> Found:
    """A span the corpus never formed, searched by the mean of its parts' vectors: the closest entries
    (exact search), and the titles with the same head word ("precision device inspector" and
    "precision instrument inspector"), by how close their words are."""
    vector = span_vector(lex, span)
    rows = [lex.index[p] for p in span.parts if p in lex.index]
    share = float(np.mean(lex.title_share[rows])) if rows else 1.0
    if vector is None:
        return Found((), "composed", share, 0)
    idx, sims = top_k_for_vector(lex.normed, vector, options.candidates)
    io = (np.asarray(lex.output_vectors[idx]) @ vector) / lex.output_norms[idx]
    shares = lex.title_share[idx]
    found = [
        Candidate(lex.keys[j], int(j), float(s), float(o), float(t), None, lex.postings_of(lex.keys[j]))
        for j, s, o, t in zip(idx.tolist(), sims.tolist(), io.tolist(), shares.tolist(), strict=True)
    ]
    taken = {c.key for c in found}
    for key in lex.titles_by_head.get(head_of(phrase_of_key(span.key)), []):
        other = cache.title_vector(key)
        if key not in taken and key != span.key and other is not None:
            found.append(
                Candidate(key, lex.index.get(key, -1), float(other @ vector), 0.0, 1.0, None, lex.postings_of(key))
            )
    found.sort(key=lambda c: (-c.similarity, c.key))
    return Found(tuple(found), "composed", share, 0)


def _known_candidates(
    lex: Lexicon, cache: ExpansionCache, span: Span, options: ExpansionOptions
) -> tuple[Candidate, ...]:
    """A known entry's or title's candidates, closest first (by duties where both have a profile): its
    skip-gram neighbours where it has a vector, and the titles with the most alike duties."""
    i = lex.index.get(span.key)
    vector = span_vector(lex, span)
    duties = cache.duty_neighbours(span.key)
    keys: list[str] = []
    if i is not None:
        keys = [lex.keys[j] for j in np.asarray(lex.bundle.neighbour_index[i, : options.candidates]).tolist()]
    in_table = set(keys)
    keys += [k for k in duties if k not in in_table]
    entries = [lex.index.get(k, -1) for k in keys]
    known = [n for n, j in enumerate(entries) if j >= 0]
    sims = [0.0] * len(keys)
    io = [0.0] * len(keys)
    if vector is not None and known:
        idx = np.asarray([entries[n] for n in known], dtype=np.int64)
        for n, value in zip(known, (np.asarray(lex.normed[idx]) @ vector).tolist(), strict=True):
            sims[n] = float(value)
        if i is not None:
            out_vector = np.asarray(lex.output_vectors[i]) / lex.output_norms[i]
            in_out = (np.asarray(lex.output_vectors[idx]) @ vector) / lex.output_norms[idx]
            both = (in_out + np.asarray(lex.normed[idx]) @ out_vector) / 2.0
            for n, value in zip(known, both.tolist(), strict=True):
                io[n] = float(value)
    if vector is not None:
        for n, j in enumerate(entries):
            if j < 0 and (other := cache.title_vector(keys[n])) is not None:  # its words' vector, kept
                sims[n] = float(other @ vector)
    mine = bool(duties)
    found = []
    for n, k in enumerate(keys):
        posted = lex.postings_of(k)
        d = duties.get(k, -1.0) if mine and posted else None
        found.append(Candidate(k, entries[n], sims[n], io[n], lex.share_of(k), d, posted))
    found.sort(key=lambda c: (-(c.duties if c.duties is not None else c.similarity), c.key))
    return tuple(found)


def relation_of(
    c: Candidate, lex: Lexicon, options: ExpansionOptions, own_postings: int, same: float | None = None
) -> str:
    """The relation hint: `equivalent` (likely the same job) or `related` (close, a different job).
    Two titles with profiles are equivalent when their duties are at least `equivalent_duties` of the
    cosine two profiles of one job reach in this bundle at their sizes; otherwise the dual embedding
    space decides. `same`: `Lexicon.same_job` at these sizes, where the caller has it."""
    if c.duties is not None and lex.split_half is not None:
        same = lex.same_job(own_postings, c.postings) if same is None else same
        return "equivalent" if c.duties >= options.equivalent_duties * same else "related"
    if c.similarity >= options.equivalent_similarity and c.in_out_similarity >= options.equivalent_in_out:
        return "equivalent"
    return "related"
