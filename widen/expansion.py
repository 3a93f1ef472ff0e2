"""The expansion core: a seeker's query becomes weighted neighbour phrases.

Plain functions over a loaded bundle (`Lexicon`) and a snapshot of the reviewer decisions;
no HTTP, no globals, no I/O. The CLI, the service and the review page all call `expand` and
show the `ExpansionResult` it returns.

The relation hint follows the dual embedding space idea (Mitra et al. 2016, "A Dual Embedding
Space Model for Document Ranking"; Nalisnick et al. 2016): input-input cosine says two phrases
are used the same way (typical: names for the same thing), input-output cosine says they are
used together (topical). Names for the same job sit close in input space and are not pushed
apart in input-output space; a different job that postings mention alongside (the colleague,
the other licence) is further in input space and pushed apart in input-output space.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.decisions import DecisionSet
from widen.lexicon import Lexicon
from widen.neighbours import top_k_for_vector
from widen.options import ExpansionOptions
from widen.query_text import render
from widen.result import Clause, Dropped, Expansion, ExpansionResult, ModelInfo, Segment
from widen.segment import Piece, segment_query
from widen.text import display, form, key_of

__all__ = ["expand", "weight_for"]


def weight_for(similarity: float, options: ExpansionOptions) -> float:
    """Rises with similarity and stays below max_expansion_weight (< 1): ((1 + s) / 2) ** 4."""
    s = min(max(similarity, -0.999), 0.999)
    return options.max_expansion_weight * ((1.0 + s) / 2.0) ** 4


@dataclass(frozen=True)
class _Candidates:
    """Neighbours as parallel lists: entry index, similarity, input-output cosine, title share."""

    entries: list[int]
    similarities: list[float]
    in_out: list[float]
    title_shares: list[float]
    source: str
    own_share: float


def _segment_vector(lex: Lexicon, piece: Piece) -> npt.NDArray[np.float32]:
    """The unit input vector of a known entry, or the normalised mean of a composed segment's parts."""
    if not piece.parts:
        known: npt.NDArray[np.float32] = np.asarray(lex.normed[lex.index[piece.key]])
        return known
    mean = np.asarray(lex.normed[[lex.index[p] for p in piece.parts]]).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    composed: npt.NDArray[np.float32] = (mean / norm if norm else mean).astype(np.float32)
    return composed


def _candidates(lex: Lexicon, piece: Piece, options: ExpansionOptions) -> _Candidates:
    """Neighbours of a known entry (precomputed table) or of a composed vector (exact search).

    Each comes with its input-output cosine, averaged over both directions for a known entry
    (the composed segment has no output vector of its own).
    """
    vector = _segment_vector(lex, piece)
    if piece.parts:
        rows = [lex.index[p] for p in piece.parts]
        idx, sims = top_k_for_vector(lex.normed, vector, options.candidates)
        own_share = float(np.mean(lex.title_share[rows]))
        io = (np.asarray(lex.bundle.output_vectors[idx]) @ vector) / lex.output_norms[idx]
        source = "composed"
    else:
        i = lex.index[piece.key]
        idx = np.asarray(lex.bundle.neighbour_index[i, : options.candidates])
        sims = np.asarray(lex.bundle.neighbour_similarity[i, : options.candidates])
        own_share = float(lex.title_share[i])
        out_vector = np.asarray(lex.bundle.output_vectors[i]) / lex.output_norms[i]
        in_out = (np.asarray(lex.bundle.output_vectors[idx]) @ vector) / lex.output_norms[idx]
        out_in = np.asarray(lex.normed[idx]) @ out_vector
        io = (in_out + out_in) / 2.0
        source = "model"
    return _Candidates(idx.tolist(), sims.tolist(), io.tolist(), lex.title_share[idx].tolist(), source, own_share)


def _relation(similarity: float, in_out: float, options: ExpansionOptions) -> str:
    if similarity >= options.equivalent_similarity and in_out >= options.equivalent_in_out:
        return "equivalent"
    return "related"


def _expand_piece(
    lex: Lexicon, piece: Piece, decisions: DecisionSet, options: ExpansionOptions, explain: bool
) -> tuple[list[Expansion], list[Dropped]]:
    text = display(piece.key)
    words = text.split(" ")
    stop = frozenset(options.stop_words)
    modifiers = frozenset(options.modifiers)
    # Protected names, unknown terms, stop words and segments made only of modifiers ("night
    # shift", "part time": a shift pattern or contract, not a job) are never expanded: their
    # neighbours are other patterns, which would change what the seeker asked for.
    if (
        piece.kind == "protected"
        or (piece.kind == "unknown" and not piece.parts)
        or all(w in stop for w in words)
        or all(w in stop or w in modifiers for w in words)
    ):
        return [], []
    said = decisions.get(text)
    found = _candidates(lex, piece, options)
    own_share = found.own_share
    if said.exempt:
        return [], [
            Dropped(phrase=display(lex.keys[j]), similarity=round(sim, 4), reason="exempt")
            for j, sim in zip(found.entries, found.similarities, strict=True)
        ] if explain else []
    connectors = stop
    own_words = set(words) - connectors
    own_core = own_words - modifiers
    kept: list[Expansion] = []
    dropped: list[Dropped] = []
    taken_forms = {form(text, connectors)}
    own_vector = _segment_vector(lex, piece)
    for phrase, weight in said.pinned:
        j = lex.index.get(key_of(phrase))
        similarity = 0.0 if j is None else float(np.asarray(lex.normed[j]) @ own_vector)
        kept.append(
            Expansion(
                phrase=phrase,
                similarity=round(similarity, 4),
                weight=round(weight, 4),
                relation="equivalent",
                source="pinned",
            )
        )
        taken_forms.add(form(phrase, connectors))
    model_slots = max(options.max_per_segment - len(kept), 0)
    model_kept = 0
    pinned = {p for p, _ in said.pinned}
    own_form = form(text, connectors)
    for j, similarity, in_out, share in zip(
        found.entries, found.similarities, found.in_out, found.title_shares, strict=True
    ):
        if model_kept >= model_slots and not explain:
            break  # nothing more can be kept, and nobody asked why not
        e = lex.entry(j, connectors)
        relation = _relation(similarity, in_out, options)
        reason = None
        if e.protected:
            reason = "protected"
        elif e.junk:
            reason = "number_or_stop_word"
        elif similarity < options.min_similarity:
            reason = "below_min_similarity"
        elif e.phrase in said.blocked:
            reason = "blocked"
        elif e.phrase in pinned:
            reason = "pinned"
        elif e.form == own_form:
            reason = "same_as_original"
        elif e.content < own_words:
            reason = "broader_than_original"
        elif not options.allow_modifier_changes and (e.content - modifiers) == own_core:
            reason = "modifier_only"
        elif own_share >= options.title_share > share:
            reason = "kind_mismatch"
        elif in_out > options.alongside_in_out:
            reason = "used_alongside"
        elif e.form in taken_forms:
            reason = "near_duplicate"
        elif options.strict and relation == "related":
            reason = "related_in_strict_mode"
        elif model_kept >= model_slots:
            reason = "max_per_segment"
        if reason is not None:
            if explain:
                dropped.append(
                    Dropped.model_construct(
                        phrase=e.phrase, similarity=round(similarity, 4), reason=reason, relation=relation
                    )
                )
            continue
        weight = weight_for(similarity, options) * (options.related_factor if relation == "related" else 1.0)
        kept.append(
            Expansion.model_construct(
                phrase=e.phrase,
                similarity=round(similarity, 4),
                weight=round(max(weight, 1e-4), 4),
                relation=relation,
                source=found.source,
            )
        )
        taken_forms.add(e.form)
        model_kept += 1
    return kept, dropped


def expand(
    lex: Lexicon, decisions: DecisionSet, query: str, options: ExpansionOptions, explain: bool = False
) -> ExpansionResult:
    """Expand a query with the bundle `lex` and the reviewer decisions; `explain` keeps every drop and why."""
    pieces = segment_query(
        query,
        lex.phraser,
        lex.index,
        lex.protected,
        max_words=min(options.max_words, lex.max_words),
        max_tokens=options.max_tokens,
    )
    expanded = [_expand_piece(lex, p, decisions, options, explain) for p in pieces]
    # Over the clause budget, the lightest expansions go first; every original stays.
    budget = max(options.max_clauses - len({p.key for p in pieces}), 0)
    ranked = sorted(
        ((e.weight, s, n) for s, (kept, _) in enumerate(expanded) for n, e in enumerate(kept)),
        key=lambda t: (-t[0], t[1], t[2]),
    )
    keep = {(s, n) for _, s, n in ranked[:budget]}
    segments: list[Segment] = []
    clauses: list[Clause] = []
    boost = options.original_boost
    originals = {display(p.key) for p in pieces}
    emitted: set[str] = set()
    for s, (piece, (kept, dropped)) in enumerate(zip(pieces, expanded, strict=True)):
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
        kind = "unknown" if piece.kind == "unknown" else piece.kind
        segments.append(
            Segment(
                text=display(piece.key),
                kind=kind,  # type: ignore[arg-type]
                expansions=final,
                dropped=(dropped + over) if explain else None,
            )
        )
        if display(piece.key) not in emitted:  # a word typed twice is one clause
            emitted.add(display(piece.key))
            clauses.append(Clause(phrase=display(piece.key), weight=round(boost, 4), original=True, segment=s))
        clauses.extend(
            Clause(phrase=e.phrase, weight=round(e.weight * boost, 4), original=False, segment=s) for e in final
        )
    # The original clause of the first segment comes first (it already does: segment order).
    return ExpansionResult(
        query=query,
        model=ModelInfo(version=lex.version, created_at=lex.created_at),
        segments=segments,
        clauses=clauses,
        query_text=render(clauses, len(segments), options.operator),
    )
