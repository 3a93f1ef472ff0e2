"""What the review page shows of a phrase: candidates with reasons, the PCA map, and two bundles compared."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from widen.decisions.decision import Decision, DecisionSet
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import DROP_REASONS, ExpansionResult
from widen.text.forms import key_of_phrase

__all__ = [
    "CandidateRow",
    "MapPoint",
    "SegmentView",
    "Change",
    "phrase_view",
    "compare_view",
    "neighbour_map",
    "MAP_POINTS",
]

MAP_POINTS = 15  # the closest candidates drawn on the map; more and the labels cover each other


@dataclass(frozen=True)
class CandidateRow:
    phrase: str
    similarity: float
    kept: bool
    weight: float | None
    relation: str | None
    source: str
    reason: str | None

    @property
    def bar(self) -> float:
        """Bar length in 0..1 for a similarity in -1..1 (common practice, no source: clamp negatives)."""
        return max(0.0, min(1.0, self.similarity))

    @property
    def reason_text(self) -> str:
        return DROP_REASONS.get(self.reason or "", self.reason or "")


@dataclass(frozen=True)
class MapPoint:
    phrase: str
    x: float
    y: float
    role: str  # phrase, kept, dropped


@dataclass(frozen=True)
class SegmentView:
    index: int
    text: str
    kind: str
    candidates: list[CandidateRow]
    map: list[MapPoint] = field(default_factory=list)
    decisions: list[Decision] = field(default_factory=list)
    field: str | None = None
    corrected: str | None = None


def _vector(lex: Lexicon, phrase: str) -> np.ndarray[Any, Any] | None:
    """The unit input vector of a phrase: its own entry, or the mean of its known words."""
    j = lex.index.get(key_of_phrase(phrase))
    if j is not None:
        return np.asarray(lex.normed[j], dtype=np.float64)
    rows = [lex.index[w] for w in phrase.split(" ") if w in lex.index]
    if not rows:
        return None
    mean = np.asarray(lex.normed[rows], dtype=np.float64).mean(axis=0)
    norm = float(np.linalg.norm(mean))
    return mean / norm if norm else None


def neighbour_map(
    lex: Lexicon, phrase: str, candidates: list[CandidateRow], width: float = 480, height: float = 300
) -> list[MapPoint]:
    """The phrase and its candidates projected on their first two principal components (PCA
    by singular value decomposition of the centred vectors), scaled into a width x height box."""
    names, roles, vectors = [], [], []
    own = _vector(lex, phrase)
    if own is None:
        return []
    names.append(phrase)
    roles.append("phrase")
    vectors.append(own)
    for c in candidates:
        v = _vector(lex, c.phrase)
        if v is not None and c.phrase != phrase:
            names.append(c.phrase)
            roles.append("kept" if c.kept else "dropped")
            vectors.append(v)
    if len(vectors) < 3:
        return []
    matrix = np.vstack(vectors)
    centred = matrix - matrix.mean(axis=0)
    _, _, vt = np.linalg.svd(centred, full_matrices=False)
    xy = centred @ vt[:2].T
    # One scale for both axes, so that distance on the map keeps its meaning; room for labels.
    left, top, room_x, room_y = 20.0, 20.0, width - 140.0, height - 40.0
    lo = xy.min(axis=0)
    span = xy.max(axis=0) - lo
    scale = min(room_x / span[0] if span[0] > 1e-12 else np.inf, room_y / span[1] if span[1] > 1e-12 else np.inf)
    scale = float(scale) if np.isfinite(scale) else 1.0
    placed = (xy - lo) * scale
    return [
        MapPoint(n, round(left + float(px), 1), round(top + float(py), 1), r)
        for n, r, (px, py) in zip(names, roles, placed, strict=True)
    ]


def phrase_view(
    lex: Lexicon, cache: ExpansionCache, decisions: DecisionSet, query: str, options: ExpansionOptions
) -> tuple[ExpansionResult, list[SegmentView]]:
    """Expand with every drop explained; one view per segment, kept and dropped by similarity."""
    result = expand(lex, decisions, query, options, explain=True, cache=cache)
    views = []
    for s, segment in enumerate(result.segments):
        rows = [
            CandidateRow(e.phrase, e.similarity, True, e.weight, e.relation, e.source, None) for e in segment.expansions
        ]
        rows += [
            CandidateRow(d.phrase, d.similarity, False, None, d.relation, "model", d.reason)
            for d in segment.dropped or []
        ]
        rows.sort(key=lambda c: (-c.similarity, c.phrase))
        points = neighbour_map(lex, segment.text, rows[:MAP_POINTS]) if rows else []
        views.append(SegmentView(s, segment.text, segment.kind, rows, points, [], segment.field, segment.corrected))
    return result, views


@dataclass(frozen=True)
class Change:
    phrase: str
    left_rank: int | None
    right_rank: int | None
    left_weight: float | None
    right_weight: float | None

    @property
    def mark(self) -> str:
        """What the right-hand bundle does differently: added, removed, up, down or same."""
        if self.left_rank is None:
            return "added"
        if self.right_rank is None:
            return "removed"
        if self.right_rank < self.left_rank:
            return "up"
        if self.right_rank > self.left_rank:
            return "down"
        return "same"


def _ranked(result: ExpansionResult) -> dict[str, tuple[int, float]]:
    expansions = sorted((c for c in result.clauses if not c.original), key=lambda c: (-c.weight, c.phrase))
    return {c.phrase: (n + 1, c.weight) for n, c in enumerate(expansions)}


def compare_view(left: ExpansionResult, right: ExpansionResult) -> list[Change]:
    """Every expansion of either result, ranked by weight, with its place on each side."""
    a, b = _ranked(left), _ranked(right)
    rows = [
        Change(
            p, a[p][0] if p in a else None, b[p][0] if p in b else None, a.get(p, (0, None))[1], b.get(p, (0, None))[1]
        )
        for p in set(a) | set(b)
    ]
    rows.sort(key=lambda c: (min(r for r in (c.left_rank, c.right_rank) if r is not None), c.phrase))
    return rows
