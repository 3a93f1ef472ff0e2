"""Splitting a seeker's query into segments the way the corpus was phrased.

The query goes through the one tokeniser and the bundle's phrase passes, then
neighbouring entries are joined by greedy longest match (up to `max_words` words) against
the vocabulary and the protected names. Text in double quotes is kept as one segment.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Collection, Sequence
from dataclasses import dataclass

from widen.text import PHRASE_JOINER, tokens, words_in

__all__ = ["Piece", "segment_query"]

_QUOTED = re.compile(r'"([^"]*)"')


@dataclass(frozen=True)
class Piece:
    """One segment: its vocabulary key (words joined by the phrase joiner) and how it was found.

    `parts` are the known entries a composed vector is built from (empty unless composed).
    """

    key: str
    kind: str  # phrase, term, unknown, protected
    parts: tuple[str, ...] = ()


def _greedy(entries: Sequence[str], known: Callable[[str], bool], max_words: int) -> list[str]:
    out: list[str] = []
    i = 0
    while i < len(entries):
        best = i + 1
        words = words_in(entries[i])
        for j in range(i + 2, len(entries) + 1):
            words += words_in(entries[j - 1])
            if words > max_words:
                break
            if known(PHRASE_JOINER.join(entries[i:j])):
                best = j
        out.append(PHRASE_JOINER.join(entries[i:best]))
        i = best
    return out


def _classify(key: str, vocabulary: Collection[str], protected: Collection[str], parts: Sequence[str]) -> Piece:
    if key in protected:
        return Piece(key, "protected")
    if key in vocabulary:
        return Piece(key, "phrase" if PHRASE_JOINER in key else "term")
    if len(parts) > 1 and all(p in vocabulary for p in parts):
        return Piece(key, "unknown", tuple(parts))
    return Piece(key, "unknown")


def segment_query(
    query: str,
    phraser: Callable[[list[str]], list[str]],
    vocabulary: Collection[str],
    protected: Collection[str],
    max_words: int,
    max_tokens: int,
) -> list[Piece]:
    """Segments of a query, in order; at most `max_tokens` tokens are looked at."""
    pieces: list[Piece] = []
    budget = max_tokens
    position = 0
    chunks: list[tuple[str, bool]] = []
    for match in _QUOTED.finditer(query):
        chunks.append((query[position : match.start()], False))
        chunks.append((match.group(1), True))
        position = match.end()
    chunks.append((query[position:], False))

    def known(key: str) -> bool:
        return key in vocabulary or key in protected

    for text, quoted in chunks:
        toks = tokens(text)[:budget]
        budget -= len(toks)
        if not toks:
            continue
        if quoted:
            key = PHRASE_JOINER.join(toks)
            pieces.append(_classify(key, vocabulary, protected, _greedy(phraser(list(toks)), known, max_words)))
            continue
        for key in _greedy(phraser(list(toks)), known, max_words):
            parts = key.split(PHRASE_JOINER)
            pieces.append(_classify(key, vocabulary, protected, parts))
        if budget <= 0:
            break
    return pieces
