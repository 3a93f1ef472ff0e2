"""Titles an employer mistyped, which the title table holds like any other (a title seen once is
a title): told apart by the titles and words the dump uses more, so that no expansion offers them."""

from __future__ import annotations

from collections.abc import Callable, Collection

from rapidfuzz import distance

from widen.expansion.lexicon import Lexicon
from widen.text.forms import PHRASE_JOINER

__all__ = ["mistyped", "slip"]


def slip(typed: str, meant: str, edits: int = 1) -> bool:
    """One word is a slip of the fingers away from another: `edits` edits at most (a swap of two letters
    is one), for words of three letters or more (common practice in spelling correction, no source)."""
    if len(meant) < 3 or abs(len(typed) - len(meant)) > edits:
        return False
    return bool(distance.OSA.distance(typed, meant, score_cutoff=edits) <= edits)


def mistyped(lex: Lexicon, key: str, noise: Collection[str], near: Callable[[str], str | None]) -> bool:
    """A title an employer mistyped: another title, named by at least three times as many postings,
    is the same words but one a slip away ("saff nurse" of "staff nurse"), or the same words with a
    mistyped decoration before or after ("tmie coach driver": "Part Tmie Coach Driver"); a mistyped
    place or employer name; or a single word the vocabulary does not know, a slip from one it does."""
    words = key.split(PHRASE_JOINER)
    enough = 3 * max(lex.postings_of(key), 1)
    for n, word in enumerate(words):
        for other in lex.titles_but_one.get((*words[:n], "", *words[n + 1 :]), ()):
            theirs = other.split(PHRASE_JOINER)[n]
            if other != key and lex.postings_of(other) >= enough and slip(word, theirs):
                return True
    unknown = [w not in lex.index or w in noise for w in words]
    first = next((n for n, u in enumerate(unknown) if not u), len(words))
    last = len(words) - next((n for n, u in enumerate(reversed(unknown)) if not u), len(words))
    if 0 < last - first < len(words) and lex.postings_of(PHRASE_JOINER.join(words[first:last])) >= enough:
        return True
    if all(w not in lex.index for w in words) and any(slip(key, name, 2) for name in lex.protected):
        return True
    return len(words) == 1 and key not in lex.index and near(key) is not None
