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

import numpy as np
import numpy.typing as npt

from widen.expansion.cache import CandidatesKey, ExpansionCache
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.segment import Span
from widen.model.neighbours import top_k_for_vector

__all__ = ["Candidate", "Found", "find_candidates", "relation_of", "span_vector"]


@dataclass(frozen=True)
class Candidate:
    entry: int
    similarity: float  # cosine of the input vectors
    in_out_similarity: float  # input-output cosine, both directions averaged for a known entry
    title_share: float
    duties: float | None  # cosine of the duties profiles; -1.0 when both have one and they are not close


@dataclass(frozen=True)
class Found:
    """A span's candidates, closest first; the source to report; the span's own title share."""

    candidates: tuple[Candidate, ...]
    source: str  # model (a known entry) or composed
    own_share: float


def span_vector(lex: Lexicon, span: Span) -> npt.NDArray[np.float32]:
    """The unit input vector of a known entry, or the normalised mean of a composed span's parts."""
    if not span.parts:
        known: npt.NDArray[np.float32] = np.asarray(lex.normed[lex.index[span.key]])
        return known
    mean = np.asarray(lex.normed[[lex.index[p] for p in span.parts]]).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    composed: npt.NDArray[np.float32] = (mean / norm if norm else mean).astype(np.float32)
    return composed


def find_candidates(lex: Lexicon, cache: ExpansionCache, span: Span, options: ExpansionOptions) -> Found:
    """Neighbours of a known entry (the precomputed tables, kept) or of a composed vector (exact search)."""
    vector = span_vector(lex, span)
    if span.parts:
        rows = [lex.index[p] for p in span.parts]
        idx, sims = top_k_for_vector(lex.normed, vector, options.candidates)
        io = (np.asarray(lex.output_vectors[idx]) @ vector) / lex.output_norms[idx]
        shares = lex.title_share[idx]
        found = tuple(
            Candidate(int(j), float(s), float(o), float(t), None)
            for j, s, o, t in zip(idx.tolist(), sims.tolist(), io.tolist(), shares.tolist(), strict=True)
        )
        return Found(found, "composed", float(np.mean(lex.title_share[rows])))
    i = lex.index[span.key]
    key: CandidatesKey = (i, options.candidates)
    kept = cache.candidates.get(key)
    if kept is None:
        kept = cache.candidates.keep(key, _entry_candidates(lex, cache, i, vector, options))
    return Found(kept, "model", float(lex.title_share[i]))


def _entry_candidates(
    lex: Lexicon, cache: ExpansionCache, i: int, vector: npt.NDArray[np.float32], options: ExpansionOptions
) -> tuple[Candidate, ...]:
    """A known entry's candidates, closest first (by duties where both have a profile)."""
    duties = cache.duty_neighbours(i)
    table = np.asarray(lex.bundle.neighbour_index[i, : options.candidates]).tolist()
    in_table = set(table)
    extra = [j for j in duties if j not in in_table]
    idx = np.asarray(table + extra, dtype=np.int64)
    sims = np.asarray(lex.normed[idx]) @ vector
    out_vector = np.asarray(lex.output_vectors[i]) / lex.output_norms[i]
    in_out = (np.asarray(lex.output_vectors[idx]) @ vector) / lex.output_norms[idx]
    io = (in_out + np.asarray(lex.normed[idx]) @ out_vector) / 2.0
    mine = bool(duties)
    profiled = lex.with_duties
    found = []
    for j, s, o, t in zip(idx.tolist(), sims.tolist(), io.tolist(), lex.title_share[idx].tolist(), strict=True):
        d = duties.get(j, -1.0) if mine and profiled[j] else None
        found.append(Candidate(j, float(s), float(o), float(t), d))
    found.sort(key=lambda c: (-(c.duties if c.duties is not None else c.similarity), c.entry))
    return tuple(found)


def relation_of(c: Candidate, lex: Lexicon, options: ExpansionOptions) -> str:
    """The relation hint: `equivalent` (likely the same job) or `related` (close, a different job).
    Two titles with profiles are equivalent when their duties are at least `equivalent_duties` of the
    bundle's own same-job cosine; otherwise the dual embedding space decides."""
    if c.duties is not None and lex.split_half is not None:
        return "equivalent" if c.duties >= options.equivalent_duties * lex.split_half else "related"
    if c.similarity >= options.equivalent_similarity and c.in_out_similarity >= options.equivalent_in_out:
        return "equivalent"
    return "related"
