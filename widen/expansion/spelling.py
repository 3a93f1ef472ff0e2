"""Spelling correction of a word the bundle has never seen: the vocabulary word it most likely is."""

from __future__ import annotations

import threading
from array import array
from collections import Counter

import numpy as np
import numpy.typing as npt
from rapidfuzz import distance, process

from widen.expansion.lexicon import Lexicon
from widen.text.forms import PHRASE_JOINER

__all__ = ["Speller", "no_correction"]


def no_correction(word: str) -> None:
    """What segmentation calls when spelling correction is off."""
    return None


def _distance_for(word: str) -> int:
    """How far a correction may be: none for short words, one edit up to eight letters, two beyond
    (common practice in spelling correction, no single source)."""
    return 0 if len(word) < 5 else 1 if len(word) <= 8 else 2


class Speller:
    """Every word of the vocabulary and of the protected names, with its corpus count (a word's own
    count plus the counts of the phrases it is in), and with `titles` the words of the dump's titles
    (counted by the postings naming them). Parameters: the lexicon it corrects towards; `titles`."""

    def __init__(self, lexicon: Lexicon, titles: bool = True) -> None:
        counts: Counter[str] = Counter()
        for key, n in zip(lexicon.keys, lexicon.counts.tolist(), strict=True):
            for word in key.split(PHRASE_JOINER):
                if word.isalpha() and len(word) >= 3:
                    counts[word] += n
        for key in lexicon.protected:
            for word in key.split(PHRASE_JOINER):
                if word.isalpha() and len(word) >= 3:
                    counts[word] += 1
        for key, n in zip(lexicon.titles if titles else [], lexicon.title_postings, strict=False):
            for word in key.split(PHRASE_JOINER):
                if word.isalpha() and len(word) >= 3:
                    counts[word] += n
        self.words = sorted(counts)
        self.counts: npt.NDArray[np.float64] = np.array([counts[w] for w in self.words], dtype=np.float64)
        self._within: dict[tuple[int, int], tuple[list[str], array[int]]] = {}
        self._lock = threading.Lock()

    def _near_in_length(self, word: str, edits: int) -> list[tuple[str, int, int]]:
        """The words at most `edits` edits from `word`, as `process.extract` finds them (the 20 nearest,
        ties in the word list's order), each with its index in `words`. Only words of a length within
        `edits` of the word's can be that near (an edit changes the length by one at most), so each
        search reads those alone, kept in the word list's order per length and bound: the same 20."""
        key = (len(word), edits)
        found = self._within.get(key)
        if found is None:
            with self._lock:
                rows = array("l", (n for n, w in enumerate(self.words) if abs(len(w) - len(word)) <= edits))
                found = self._within.setdefault(key, ([self.words[n] for n in rows], rows))  # 8 bytes a row
        choices, rows = found
        near = process.extract(word, choices, scorer=distance.OSA.distance, score_cutoff=edits, limit=20)
        return [(str(w), int(d), rows[n]) for w, d, n in near]

    def near(self, word: str) -> str | None:
        """The most frequent word one slip away (one edit, a swap of two letters included), for a word of
        three letters or more; None when none is."""
        if len(word) < 3:
            return None
        found = [m for m in self._near_in_length(word, 1) if m[0] != word]
        return str(max(found, key=lambda m: (self.counts[m[2]], m[0]))[0]) if found else None

    def correct(self, word: str) -> str | None:
        """The vocabulary word a mistyped word most likely is: the fewest edits (optimal string
        alignment: a swap of two letters is one edit), bounded by the word's length; among those,
        the most frequent in the corpus. None for a known word, a short one, or when nothing is near."""
        limit = _distance_for(word)
        if limit == 0 or not word.isalpha():
            return None
        near = self._near_in_length(word, limit)
        if not near:
            return None
        best = min(near, key=lambda m: (m[1], -self.counts[m[2]], m[0]))
        return None if best[0] == word else str(best[0])


class LazySpeller:
    """A `Speller` built on first use (thread-safe), holding nothing but the lexicon: what a cache hands
    segmentation to correct with, so that nothing the cache holds refers back to the cache (a cycle
    would leave a replaced bundle's whole cache to the garbage collector; see `service.state`)."""

    def __init__(self, lexicon: Lexicon, titles: bool = True) -> None:
        self.lexicon, self.titles = lexicon, titles
        self._speller: Speller | None = None
        self._lock = threading.Lock()

    def get(self) -> Speller:
        if self._speller is None:
            with self._lock:
                if self._speller is None:
                    self._speller = Speller(self.lexicon, self.titles)
        return self._speller

    def correct(self, word: str) -> str | None:
        return self.get().correct(word)
