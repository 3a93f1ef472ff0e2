"""A bundle made ready for expansion: arrays and lookups built once, at load, never per query."""

from __future__ import annotations

import re
import threading
from collections import Counter
from dataclasses import dataclass
from typing import Any, TypeVar

import numpy as np
import numpy.typing as npt
from rapidfuzz import distance, process

from widen.bundle import Bundle
from widen.options import ExpansionOptions
from widen.segment import Vocabulary
from widen.text import PHRASE_JOINER, display, form, is_number, key_of, phrase_of

__all__ = ["Lexicon", "Entry"]

T = TypeVar("T")

_NUMBER = re.compile(r"^[\d.,/:%+#-]+(?:st|nd|rd|th|k|hr|pm|am)?$")


@dataclass(frozen=True)
class Entry:
    """What the filters need to know of one vocabulary entry under one stop list."""

    phrase: str
    words: frozenset[str]
    content: frozenset[str]  # words less connectors and stop words
    form: str
    junk: bool  # only numbers and stop words
    protected: bool


def _no_correction(word: str) -> None:
    return None


def _distance_for(word: str) -> int:
    """How far a correction may be: none for short words, one edit up to eight letters, two beyond
    (common practice in spelling correction, no single source)."""
    return 0 if len(word) < 5 else 1 if len(word) <= 8 else 2


class Lexicon:
    """A bundle made ready for expansion. Parameters: `bundle`, an opened bundle; `memoise`, keep what
    depends on the bundle alone once worked out (`memo`). False is the reference the tests compare
    the kept answers with: every call works everything out again."""

    def __init__(self, bundle: Bundle, memoise: bool = True) -> None:
        self.bundle = bundle
        self.memoise = memoise
        self.version = bundle.version
        self.created_at = bundle.created_at
        self.options: ExpansionOptions = bundle.options
        self.keys = bundle.keys
        self.index = bundle.index
        self.protected = bundle.protected
        self.names = bundle.names
        self.phraser = bundle.phraser
        self.max_words = bundle.max_words
        self.normed = bundle.normed_vectors
        out = np.asarray(bundle.output_vectors, dtype=np.float32)
        norms = np.linalg.norm(out, axis=1)
        norms[norms == 0] = 1.0
        self.output_norms: npt.NDArray[np.float32] = norms.astype(np.float32)
        stats = np.asarray(bundle.entry_stats, dtype=np.float64)
        self.counts: npt.NDArray[np.float64] = stats[:, 0]
        self.title_share: npt.NDArray[np.float64] = stats[:, 1] / np.maximum(stats[:, 0], 1.0)
        duties = (bundle.manifest.get("duties") or {}).get("split_half")
        #: The bundle's own cosine of "same job" between two duties profiles; None without duties.
        self.split_half: float | None = float(duties) if duties and bundle.duty_rows is not None else None
        rows = bundle.duty_rows
        #: For each entry, whether it has a duties profile (a plain list: one lookup per candidate).
        self.with_duties: list[bool] = (
            (np.asarray(rows) >= 0).tolist() if rows is not None and self.split_half is not None else []
        )
        self._duty_neighbours: dict[int, dict[int, float]] = {}
        #: Results that depend on this bundle alone, worked out once per key (`remember`).
        self.memo: dict[object, Any] = {}
        self._option_keys: dict[int, tuple[ExpansionOptions, str]] = {}
        self._vocabulary_of: dict[int, tuple[ExpansionOptions, Vocabulary]] = {}
        #: How close two titles with different duties are in skip-gram space in this bundle, by quantile.
        self._apart: dict[float, float | None] = {}
        #: Every word of every place and employer name.
        self.name_words: frozenset[str] = frozenset(w for k in self.protected for w in k.split(PHRASE_JOINER))
        self._entries: dict[tuple[int, frozenset[str]], Entry] = {}
        self._vocabularies: dict[tuple[object, ...], Vocabulary] = {}
        self._used_spellings: dict[tuple[object, ...], list[str]] = {}
        self._spelling: tuple[list[str], npt.NDArray[np.float64]] | None = None
        self._lock = threading.Lock()

    def entry(self, j: int, stop: frozenset[str], title_share: float = 0.0) -> Entry:
        """What the filters need to know of entry j, worked out once per entry and stop list. An entry is
        protected when it is a place or employer name, or only words of such names and seldom a title
        ("community hospital" of "Hensby Community Hospital"; `title_share`, the option's bar)."""
        found = self._entries.get((j, stop))
        if found is None:
            key = self.keys[j]
            phrase = display(key)
            words = frozenset(phrase.split(" "))
            piece = words <= self.name_words and self.title_share[j] < title_share
            found = Entry(
                phrase,
                words,
                words - stop,
                form(phrase, stop),
                all(w in stop or _NUMBER.match(w) or is_number(w) for w in words),
                key in self.protected or piece,
            )
            if len(self._entries) < 1_000_000:
                self._entries[(j, stop)] = found
        return found

    # -- duties -----------------------------------------------------------------------------

    def duty_neighbours(self, j: int) -> dict[int, float]:
        """The titles whose duties are most alike entry j's, with their cosines; empty without a profile.
        Read from the bundle once per entry (callers must not change the dict)."""
        found = self._duty_neighbours.get(j)
        if found is None:
            found = {}
            if self.has_duties(j):
                r = int(self.bundle.duty_rows[j])  # type: ignore[index]
                index = np.asarray(self.bundle.duty_index[r])  # type: ignore[index]
                sims = np.asarray(self.bundle.duty_similarity[r])  # type: ignore[index]
                found = dict(zip(index.tolist(), sims.tolist(), strict=True))
            if len(self._duty_neighbours) < 1_000_000:
                self._duty_neighbours[j] = found
        return found

    def options_key(self, options: ExpansionOptions) -> str:
        """A key that is equal for equal options, for `memo`: their JSON, worked out once per options
        object (held here, so its id cannot be reused while it is a key)."""
        found = self._option_keys.get(id(options))
        if found is None or found[0] is not options:
            if len(self._option_keys) >= 1024:
                self._option_keys.clear()
            found = self._option_keys[id(options)] = (options, options.model_dump_json())
        return found[1]

    def remember(self, key: object, value: T) -> T:
        """Keep `value` for `key` in `memo` (up to a bound that no real vocabulary reaches), and return it."""
        if self.memoise and len(self.memo) < 2_000_000:
            self.memo[key] = value
        return value

    def has_duties(self, j: int) -> bool:
        return bool(self.with_duties) and self.with_duties[j]

    def apart(self, quantile: float) -> float | None:
        """The input cosine that `quantile` of the pairs of titles with different duties stay under in this
        bundle: how close two different jobs look to the skip-gram model of this dump. None without
        duties. Pairs are different when neither is among the other's titles with alike duties (at
        least `related_duties` of the split-half cosine); at most 2,000 titles are looked at."""
        if quantile not in self._apart:
            self._apart[quantile] = self._different_jobs_cosine(quantile)
        return self._apart[quantile]

    def _different_jobs_cosine(self, quantile: float) -> float | None:
        rows = self.bundle.duty_rows
        if rows is None or self.split_half is None:
            return None
        titles = np.flatnonzero(np.asarray(rows) >= 0)[:2000]
        if len(titles) < 3:
            return None
        position = {int(j): n for n, j in enumerate(titles.tolist())}
        floor = self.options.related_duties * self.split_half
        close = np.eye(len(titles), dtype=bool)
        for n, j in enumerate(titles.tolist()):
            for k, s in self.duty_neighbours(j).items():
                m = position.get(k)
                if m is not None and s >= floor:
                    close[n, m] = close[m, n] = True
        vectors = np.asarray(self.normed[titles], dtype=np.float32)
        cosines = vectors @ vectors.T
        apart = cosines[~close]
        return float(np.quantile(apart, quantile)) if apart.size else None

    # -- the words segmentation knows ---------------------------------------------------------

    @staticmethod
    def _marker(options: ExpansionOptions) -> tuple[object, ...]:
        return (options.noise_words, options.modifiers, tuple(sorted(options.patterns.items())), options.spelling)

    def vocabulary(self, options: ExpansionOptions) -> Vocabulary:
        """Segmentation's view of this bundle under `options`, built once per set of options (and
        found again without looking at the options when the same options object asks)."""
        seen = self._vocabulary_of.get(id(options))
        if seen is not None and seen[0] is options:
            return seen[1]
        marker = self._marker(options)
        found = self._vocabularies.get(marker)
        if found is None:
            with self._lock:
                names = {k: field for k, (field, _) in self.names.items()}
                names.update({k: "protected" for k in self.protected if k not in names})
                found = Vocabulary(
                    self.index,
                    names,
                    frozenset(w for n in options.noise_words for w in n.split(" ")),
                    frozenset(options.modifiers),
                    self.pattern_spellings(options),
                    self.correct if options.spelling else _no_correction,
                )
                self._vocabularies[marker] = found
        if len(self._vocabulary_of) >= 1024:
            self._vocabulary_of.clear()
        self._vocabulary_of[id(options)] = (options, found)  # holds the options: their id stays theirs
        return found

    def pattern_spellings(self, options: ExpansionOptions) -> dict[str, str]:
        """Spelling key -> pattern: the configured spellings, and the vocabulary entries of the dump that
        are the same words in another form ("nightshift" for "night shift", "weekend only")."""
        spellings = {key_of(phrase_of(s)): name for name, group in options.patterns.items() for s in group}
        forms = {form(display(k), frozenset()): name for k, name in spellings.items()}
        in_names = {w for k in self.protected for w in k.split(PHRASE_JOINER)}
        for key in self.keys:
            name = forms.get(form(display(key), frozenset()))
            if name is not None and key not in spellings and not set(key.split(PHRASE_JOINER)) & in_names:
                spellings[key] = name
        return spellings

    def used_spellings(self, pattern: str, options: ExpansionOptions) -> list[str]:
        """The spellings of a pattern that the dump uses (their words are in the vocabulary), most used
        first; worked out once per pattern and set of options."""
        marker = (*self._marker(options), pattern)
        known = self._used_spellings.get(marker)
        if known is None:
            known = self._used_spellings[marker] = self._find_used_spellings(pattern, options)
        return list(known)

    def _find_used_spellings(self, pattern: str, options: ExpansionOptions) -> list[str]:
        found = []
        for key, name in self.vocabulary(options).spellings.items():
            if name != pattern:
                continue
            rows = [self.index.get(w) for w in key.split(PHRASE_JOINER)]
            if self.index.get(key) is not None or all(r is not None for r in rows):
                j = self.index.get(key)
                count = self.counts[j] if j is not None else min(self.counts[r] for r in rows if r is not None)
                found.append((count, display(key)))
        return [s for _, s in sorted(found, key=lambda t: (-t[0], t[1]))]

    # -- spelling --------------------------------------------------------------------------

    def _spelling_words(self) -> tuple[list[str], npt.NDArray[np.float64]]:
        """Every word of the vocabulary and of the protected names, with its corpus count (a word's own
        count plus the counts of the phrases it is in); built on first use."""
        if self._spelling is None:
            with self._lock:
                counts: Counter[str] = Counter()
                for key, n in zip(self.keys, self.counts.tolist(), strict=True):
                    for word in key.split(PHRASE_JOINER):
                        if word.isalpha() and len(word) >= 3:
                            counts[word] += n
                for key in self.protected:
                    for word in key.split(PHRASE_JOINER):
                        if word.isalpha() and len(word) >= 3:
                            counts[word] += 1
                words = sorted(counts)
                self._spelling = (words, np.array([counts[w] for w in words], dtype=np.float64))
        return self._spelling

    def correct(self, word: str) -> str | None:
        """The vocabulary word a mistyped word most likely is: the fewest edits (optimal string
        alignment: a swap of two letters is one edit), bounded by the word's length; among those,
        the most frequent in the corpus. None for a known word, a short one, or when nothing is near."""
        limit = _distance_for(word)
        if limit == 0 or not word.isalpha():
            return None
        words, counts = self._spelling_words()
        near = process.extract(word, words, scorer=distance.OSA.distance, score_cutoff=limit, limit=20)
        if not near:
            return None
        best = min(near, key=lambda m: (m[1], -counts[m[2]], m[0]))
        return None if best[0] == word else str(best[0])
