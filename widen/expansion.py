"""The expansion core: a seeker's query becomes weighted neighbour phrases.

Plain functions over a loaded bundle (`Lexicon`) and a snapshot of the reviewer decisions;
no HTTP, no globals, no I/O. The CLI, the service and the review page all call `expand` and
show the `ExpansionResult` it returns.

Where to look for a job's other names: its neighbours in skip-gram space, and, for a title, the
titles posted with the most alike duties (`training.duties`). How alike two titles are decides
the relation hint: two titles whose duties are as alike as one title's own two halves are in
this bundle are `equivalent`; less alike, `related`; much less, dropped. Where a pair has no
duties profiles the hint follows the dual embedding space idea (Mitra et al. 2016, "A Dual
Embedding Space Model for Document Ranking"; Nalisnick et al. 2016): input-input cosine says two
phrases are used the same way, input-output cosine says they are used together.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.candidates import candidates, fixed_filters, segment_vector
from widen.decisions import DecisionSet, PhraseDecisions
from widen.lexicon import Lexicon
from widen.options import ExpansionOptions
from widen.query_text import JOBS, merged_text, render, segments_baseline, segments_words
from widen.result import Clause, Dropped, DropReason, Expansion, ExpansionResult, ModelInfo, Segment
from widen.segment import Piece, segment_query
from widen.text import PHRASE_JOINER, display, form, key_of

__all__ = ["expand", "weight_for", "prepare"]


def weight_for(similarity: float, options: ExpansionOptions) -> float:
    """Rises with similarity and stays below max_expansion_weight (< 1): ((1 + s) / 2) ** 4."""
    s = min(max(similarity, -0.999), 0.999)
    return options.max_expansion_weight * ((1.0 + s) / 2.0) ** 4


@dataclass(frozen=True)
class _Context:
    """What one segment's filters need to know of the whole query."""

    words: frozenset[str]  # every word of the query's job segments
    head: bool  # a single word next to another job segment: the head of a title split in two
    whole: npt.NDArray[np.float32] | None  # the job segments' composed vector, for a head word


def _pinned(lex: Lexicon, said: PhraseDecisions, vector: npt.NDArray[np.float32]) -> list[Expansion]:
    kept = []
    for phrase, weight in said.pinned:
        j = lex.index.get(key_of(phrase))
        similarity = 0.0 if j is None else float(np.asarray(lex.normed[j]) @ vector)
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


def _expand_piece(
    lex: Lexicon, piece: Piece, decisions: DecisionSet, options: ExpansionOptions, explain: bool, context: _Context
) -> tuple[list[Expansion], list[Dropped]]:
    """The expansions of one job segment (its correction aside), and with `explain` every drop and why.
    A known entry that no reviewer decided anything for, and whose neighbours in the query do not
    change its filters (it is no head word beside another job), expands the same way in every query:
    that outcome is worked out once per bundle and options (`Lexicon.memo`)."""
    if piece.kind not in JOBS or (piece.kind == "unknown" and not piece.parts):
        return [], []
    said = decisions.get(piece.typed or display(piece.key))
    if piece.parts or context.head or said.blocked or said.pinned or said.exempt:
        return _expand_piece_now(lex, piece, decisions, options, explain, context)
    memo = ("piece", lex.index[piece.key], lex.options_key(options), explain)
    known = lex.memo.get(memo)
    if known is None:
        kept, dropped = _expand_piece_now(lex, piece, decisions, options, explain, context)
        known = lex.remember(memo, (tuple(kept), tuple(dropped)))
    return list(known[0]), list(known[1])


def _expand_piece_now(
    lex: Lexicon, piece: Piece, decisions: DecisionSet, options: ExpansionOptions, explain: bool, context: _Context
) -> tuple[list[Expansion], list[Dropped]]:
    """`_expand_piece` worked out in full."""
    text = display(piece.key)
    said = decisions.get(piece.typed or text)
    found, source, own_share = candidates(lex, piece, options)
    if said.exempt:
        drops = [
            Dropped(phrase=display(lex.keys[c.entry]), similarity=round(c.similarity, 4), reason="exempt")
            for c in found
        ]
        return [], drops if explain else []
    stop = frozenset(options.noise_words)
    own_words = set(text.split(" ")) - stop
    vector = segment_vector(lex, piece)
    kept = _pinned(lex, said, vector)
    taken_forms = {form(text, stop)} | {form(e.phrase, stop) for e in kept}
    pinned = {e.phrase for e in kept}
    model_slots = max(options.max_per_segment - len(kept), 0)
    model_kept = 0
    dropped: list[Dropped] = []
    if source == "model":  # a known entry: what the bundle and the options alone decide, worked out once
        memo = ("fixed", lex.index[piece.key], lex.options_key(options))
        fixed = lex.memo.get(memo)
        if fixed is None:
            fixed = lex.remember(memo, fixed_filters(lex, text, found, own_share, options))
    else:
        fixed = fixed_filters(lex, text, found, own_share, options)
    for c, f in zip(found, fixed, strict=True):
        if model_kept >= model_slots and not explain:
            break  # nothing more can be kept, and nobody asked why not
        e, relation = f.entry, f.relation
        # The filters in their order: the first that holds is the reason shown.
        reason: DropReason | None = f.first
        if reason is not None:
            pass
        elif e.phrase in said.blocked:
            reason = "blocked"
        elif e.phrase in pinned:
            reason = "pinned"
        elif f.second is not None:
            reason = f.second
        elif context.head and own_words < e.content and not (e.content - own_words) <= context.words:
            reason = "narrower_than_query"
        elif (
            context.head
            and context.whole is not None
            and float(lex.normed[c.entry] @ context.whole) < options.min_similarity
        ):
            reason = "off_query"
        elif f.third is not None:
            reason = f.third
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
                        phrase=e.phrase,
                        similarity=round(c.similarity, 4),
                        reason=reason,
                        relation=relation,
                        duties=None if c.duties is None or c.duties < -0.5 else round(c.duties, 4),
                    )
                )
            continue
        closeness = c.duties if c.duties is not None else c.similarity
        weight = weight_for(closeness, options) * (options.related_factor if relation == "related" else 1.0)
        kept.append(
            Expansion.model_construct(
                phrase=e.phrase,
                similarity=round(c.similarity, 4),
                weight=round(max(weight, 1e-4), 4),
                relation=relation,
                source="duties" if c.duties is not None and source == "model" else source,
                duties=None if c.duties is None else round(c.duties, 4),
            )
        )
        taken_forms.add(e.form)
        model_kept += 1
    return kept, dropped


def _contexts(lex: Lexicon, pieces: list[Piece]) -> list[_Context]:
    """Each segment's `_Context`; the words of the query's job segments are worked out once."""
    jobs = [p for p in pieces if p.kind in JOBS]
    words = frozenset(w for p in jobs for w in p.key.split(PHRASE_JOINER))
    plain = _Context(words, False, None)
    out = []
    for s, piece in enumerate(pieces):
        beside = [pieces[n] for n in (s - 1, s + 1) if 0 <= n < len(pieces)]
        head = PHRASE_JOINER not in piece.key and piece.kind in JOBS and any(p.kind in JOBS for p in beside)
        if not head:
            out.append(plain)
            continue
        whole = None
        known = [lex.index[w] for p in jobs for w in ([p.key] if p.key in lex.index else p.parts)]
        if len(known) > 1:
            mean = np.asarray(lex.normed[known]).mean(axis=0)
            whole = (mean / (np.linalg.norm(mean) or 1.0)).astype(np.float32)
        out.append(_Context(words, True, whole))
    return out


def _side_clauses(lex: Lexicon, piece: Piece, options: ExpansionOptions) -> list[Expansion]:
    """A shift pattern's other spellings that the dump uses; nothing for other kinds."""
    if piece.kind != "pattern" or piece.pattern is None:
        return []
    own = display(piece.key)
    memo = ("side", piece.pattern, own, lex.options_key(options))
    made = lex.memo.get(memo)
    if made is None:
        spellings = [s for s in lex.used_spellings(piece.pattern, options) if s != own][: options.max_per_segment]
        weight = round(options.pattern_weight, 4)
        made = lex.remember(
            memo,
            tuple(
                Expansion(phrase=s, similarity=1.0, weight=weight, relation="equivalent", source="pattern")
                for s in spellings
            ),
        )
    return list(made)


def _correction(
    piece: Piece, decisions: DecisionSet, options: ExpansionOptions
) -> tuple[Expansion | None, Dropped | None]:
    """The spelling correction of a segment the seeker mistyped, unless a reviewer blocked it."""
    if not piece.typed or piece.kind == "noise":
        return None, None
    corrected = display(piece.key)
    if corrected in decisions.get(piece.typed).blocked:
        return None, Dropped(phrase=corrected, similarity=1.0, reason="blocked")
    fixed = Expansion(
        phrase=corrected,
        similarity=1.0,
        weight=round(options.spelling_weight, 4),
        relation="equivalent",
        source="spelling",
    )
    return fixed, None


def expand(
    lex: Lexicon, decisions: DecisionSet, query: str, options: ExpansionOptions, explain: bool = False
) -> ExpansionResult:
    """Expand a query with the bundle `lex` and the reviewer decisions; `explain` keeps every drop and why."""
    pieces = segment_query(
        query, lex.phraser, lex.vocabulary(options), min(options.max_words, lex.max_words), options.max_tokens
    )
    alone = _alone(lex, decisions, pieces, options, explain)
    if alone is not None:
        made = lex.memo.get(alone)
        if made is not None:  # a known phrase alone, as typed, no decision for it: worked out before
            return ExpansionResult.built(
                query=query,
                model=_model_info(lex),
                segments=made[0],
                clauses=made[1],
                query_text=made[2],
                full_query=made[3],
            )
    boost = options.original_boost
    expanded: list[tuple[list[Expansion], list[Dropped]]] = []
    contexts = _contexts(lex, pieces)
    for s, piece in enumerate(pieces):
        correction, refused = _correction(piece, decisions, options)
        if refused is not None:  # a blocked correction: the typed words stand alone
            expanded.append(([], [refused] if explain else []))
            continue
        kept, dropped = _expand_piece(lex, piece, decisions, options, explain, contexts[s])
        if correction is not None:
            scale = correction.weight
            kept = [correction] + [e.model_copy(update={"weight": round(max(e.weight * scale, 1e-4), 4)}) for e in kept]
        expanded.append((kept + _side_clauses(lex, piece, options), dropped))
    # Over the clause budget, the lightest expansions go first; every original stays.
    originals = {piece.typed or display(piece.key) for piece in pieces if piece.kind != "noise"}
    budget = max(options.max_clauses - len(originals), 0)
    ranked = sorted(
        ((e.weight, s, n) for s, (kept, _) in enumerate(expanded) for n, e in enumerate(kept)),
        key=lambda t: (-t[0], t[1], t[2]),
    )
    keep = {(s, n) for _, s, n in ranked[:budget]}
    segments: list[Segment] = []
    clauses: list[Clause] = []
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
        typed = piece.typed or display(piece.key)
        segments.append(
            Segment.built(  # built from values already checked: no validation per query
                text=typed,
                kind=piece.kind,  # type: ignore[arg-type]
                field=piece.field,
                pattern=piece.pattern,
                corrected=display(piece.key) if piece.typed else None,
                expansions=final,
                dropped=(dropped + over) if explain else None,
            )
        )
        if piece.kind == "noise":
            continue  # names no job: no clause
        if typed not in emitted:  # a word typed twice is one clause
            emitted.add(typed)
            clauses.append(Clause.built(phrase=typed, weight=round(boost, 4), original=True, segment=s))
        clauses.extend(
            Clause.built(phrase=e.phrase, weight=round(e.weight * boost, 4), original=False, segment=s) for e in final
        )
    query_text = render(clauses, segments, options, lex.names)
    full = merged_text(segments_baseline(segments), query_text, words=segments_words(segments))
    if alone is not None:
        lex.remember(alone, (segments, clauses, query_text, full))
    return ExpansionResult.built(
        query=query, model=_model_info(lex), segments=segments, clauses=clauses, query_text=query_text, full_query=full
    )


def _model_info(lex: Lexicon) -> ModelInfo:
    """The bundle a result came from: one object per bundle (results are never changed in place)."""
    made = lex.memo.get(("model",))
    if made is None:
        made = lex.remember(("model",), ModelInfo.model_construct(version=lex.version, created_at=lex.created_at))
    return made  # type: ignore[no-any-return]


def _alone(
    lex: Lexicon, decisions: DecisionSet, pieces: list[Piece], options: ExpansionOptions, explain: bool
) -> tuple[str, int, str] | None:
    """The `memo` key of a query that is one known entry alone, spelled right, with no reviewer
    decision for it and nobody asking why: its whole answer but the echoed query depends on the
    bundle and the options alone. None for any other query."""
    if explain or len(pieces) != 1:
        return None
    piece = pieces[0]
    if piece.kind not in ("phrase", "term") or piece.typed or piece.parts or piece.key not in lex.index:
        return None
    said = decisions.get(display(piece.key))
    if said.blocked or said.pinned or said.exempt:
        return None
    return ("alone", lex.index[piece.key], lex.options_key(options))


def prepare(lex: Lexicon, options: ExpansionOptions) -> int:
    """Work out, for every entry of the bundle, how it expands on its own under `options` with no
    reviewer decision for it (what most segments of most queries are), so that no query pays for
    that the first time: the long tail of a day's queries is mostly first times. Only that outcome
    is kept (a few expansions an entry), with the whole answer to the entry typed alone; the
    candidates and filters it came from are let go again. Returns the number of entries prepared."""
    none, alone = DecisionSet(), _Context(frozenset(), False, None)
    key_of_options = lex.options_key(options)
    for i, key in enumerate(lex.keys):
        _expand_piece(lex, Piece(key, "phrase" if PHRASE_JOINER in key else "term"), none, options, False, alone)
        # And the whole answer to the entry typed alone, where it segments as itself.
        expand(lex, none, display(key), options)
        lex.memo.pop((i, options.candidates), None)
        lex.memo.pop(("fixed", i, key_of_options), None)
    return len(lex.keys)
