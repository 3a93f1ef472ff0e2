"""A segment's candidate neighbours, and what the bundle and the options alone decide of each.

The candidates of a known entry are the skip-gram table's first `candidates` and the titles whose
duties are most alike, closest first; a quoted segment the corpus never formed is searched with
its parts' mean vector. Both depend on the bundle alone, and the filters that read only the
bundle and the options (`FixedFilters`) do too, so for a known entry both are worked out once per
bundle and options and kept in `Lexicon.memo`; `widen.expansion` applies the reviewer decisions
and the query around the segment on top, per call.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.lexicon import Entry, Lexicon
from widen.neighbours import top_k_for_vector
from widen.options import ExpansionOptions
from widen.result import DropReason
from widen.segment import Piece
from widen.text import form

__all__ = ["Candidate", "FixedFilters", "candidates", "fixed_filters", "relation_of", "segment_vector"]


@dataclass(frozen=True)
class Candidate:
    entry: int
    similarity: float  # cosine of the input vectors
    in_out: float  # input-output cosine, both directions averaged for a known entry
    title_share: float
    duties: float | None  # cosine of the duties profiles; -1.0 when both have one and they are not close


def segment_vector(lex: Lexicon, piece: Piece) -> npt.NDArray[np.float32]:
    """The unit input vector of a known entry, or the normalised mean of a composed segment's parts."""
    if not piece.parts:
        known: npt.NDArray[np.float32] = np.asarray(lex.normed[lex.index[piece.key]])
        return known
    mean = np.asarray(lex.normed[[lex.index[p] for p in piece.parts]]).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    composed: npt.NDArray[np.float32] = (mean / norm if norm else mean).astype(np.float32)
    return composed


def candidates(lex: Lexicon, piece: Piece, options: ExpansionOptions) -> tuple[list[Candidate], str, float]:
    """Neighbours of a known entry (the precomputed tables) or of a composed vector (exact search),
    closest first; the source to report, and the segment's own title share."""
    vector = segment_vector(lex, piece)
    if piece.parts:
        rows = [lex.index[p] for p in piece.parts]
        idx, sims = top_k_for_vector(lex.normed, vector, options.candidates)
        io = (np.asarray(lex.bundle.output_vectors[idx]) @ vector) / lex.output_norms[idx]
        shares = lex.title_share[idx]
        found = [
            Candidate(int(j), float(s), float(o), float(t), None)
            for j, s, o, t in zip(idx.tolist(), sims.tolist(), io.tolist(), shares.tolist(), strict=True)
        ]
        return found, "composed", float(np.mean(lex.title_share[rows]))
    i = lex.index[piece.key]
    memo = (i, options.candidates)
    cached = lex.memo.get(memo)
    if cached is None:
        cached = lex.remember(memo, tuple(entry_candidates(lex, i, vector, options)))
    return list(cached), "model", float(lex.title_share[i])


def entry_candidates(
    lex: Lexicon, i: int, vector: npt.NDArray[np.float32], options: ExpansionOptions
) -> list[Candidate]:
    """A known entry's candidates, closest first: they depend on the bundle alone, so each entry's are
    worked out once (`Lexicon.memo`)."""
    duties = lex.duty_neighbours(i)
    table = np.asarray(lex.bundle.neighbour_index[i, : options.candidates]).tolist()
    in_table = set(table)
    extra = [j for j in duties if j not in in_table]
    idx = np.asarray(table + extra, dtype=np.int64)
    sims = np.asarray(lex.normed[idx]) @ vector
    out_vector = np.asarray(lex.bundle.output_vectors[i]) / lex.output_norms[i]
    in_out = (np.asarray(lex.bundle.output_vectors[idx]) @ vector) / lex.output_norms[idx]
    io = (in_out + np.asarray(lex.normed[idx]) @ out_vector) / 2.0
    mine = bool(duties)
    profiled = lex.with_duties
    found = []
    for j, s, o, t in zip(idx.tolist(), sims.tolist(), io.tolist(), lex.title_share[idx].tolist(), strict=True):
        d = duties.get(j, -1.0) if mine and profiled[j] else None
        found.append(Candidate(j, float(s), float(o), float(t), d))
    found.sort(key=lambda c: (-(c.duties if c.duties is not None else c.similarity), c.entry))
    return found


def relation_of(c: Candidate, lex: Lexicon, options: ExpansionOptions) -> str:
    if c.duties is not None and lex.split_half is not None:
        return "equivalent" if c.duties >= options.equivalent_duties * lex.split_half else "related"
    if c.similarity >= options.equivalent_similarity and c.in_out >= options.equivalent_in_out:
        return "equivalent"
    return "related"


@dataclass(frozen=True)
class FixedFilters:
    """What one candidate's filters decide from the bundle and the options alone, whatever the query
    around the segment and whatever the reviewers decided."""

    entry: Entry
    relation: str
    first: DropReason | None  # protected, number_or_stop_word, below_min_similarity, like_different_jobs
    second: DropReason | None  # same_as_original, broader_than_original, modifier_only
    third: DropReason | None  # different_duties, not_a_title, kind_mismatch, used_alongside


def fixed_filters(
    lex: Lexicon, text: str, found: Sequence[Candidate], own_share: float, options: ExpansionOptions
) -> tuple[FixedFilters, ...]:
    """The fixed part of the filters for each candidate of the segment `text`, in `found`'s order."""
    stop = frozenset(options.noise_words)
    modifiers = frozenset(options.modifiers) | options.pattern_words()
    own_words = set(text.split(" ")) - stop
    own_core = own_words - modifiers
    own_form = form(text, stop)
    floor = options.related_duties * (lex.split_half or 0.0)
    apart = lex.apart(options.apart_quantile()) or 0.0
    # In a bundle with duties profiles, a neighbour with no profile of its own is no title the dump
    # posts often enough to tell its duties: a word of the postings' text ("hold", "category" for
    # "driver"), not another name for a job. A title with a profile is compared by duties.
    titled = lex.split_half is not None
    out = []
    for c in found:
        e = lex.entry(c.entry, stop, options.title_share)
        first: DropReason | None = None
        if e.protected:
            first = "protected"
        elif e.junk:
            first = "number_or_stop_word"
        elif c.duties is None and c.similarity < options.min_similarity:
            first = "below_min_similarity"
        elif c.duties is None and c.similarity < apart:
            first = "like_different_jobs"
        second: DropReason | None = None
        if e.form == own_form:
            second = "same_as_original"
        elif e.content < own_words:
            second = "broader_than_original"
        elif e.content <= modifiers or (not options.allow_modifier_changes and (e.content - modifiers) == own_core):
            second = "modifier_only"
        third: DropReason | None = None
        if c.duties is not None and c.duties < floor:
            third = "different_duties"
        elif titled and c.duties is None and not lex.has_duties(c.entry):
            third = "not_a_title"
        elif own_share >= options.title_share > c.title_share:
            third = "kind_mismatch"
        elif c.duties is None and c.in_out > options.alongside_in_out:
            third = "used_alongside"
        out.append(FixedFilters(e, relation_of(c, lex, options), first, second, third))
    return tuple(out)
