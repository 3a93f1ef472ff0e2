"""A bundle made ready for expansion: its arrays and lookups, built once at load and never changed.

Plain read-only data, the way gensim's KeyedVectors is: every method here reads the bundle and
works something out again each time it is called. What is worth keeping once worked out (per
entry, per set of options) is kept by `widen.expansion.cache.ExpansionCache`, not here.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.expansion.options import ExpansionOptions, options_of
from widen.model.bundle import Bundle
from widen.text.forms import PHRASE_JOINER, key_of_phrase, phrase_of_key, phrase_of_text, spelling_key
from widen.text.tokenize import is_number

__all__ = ["Lexicon", "EntryFacts"]

_NUMBER = re.compile(r"^[\d.,/:%+#-]+(?:st|nd|rd|th|k|hr|pm|am)?$")


@dataclass(frozen=True)
class EntryFacts:
    """What the filters need to know of one vocabulary entry under one stop list."""

    phrase: str
    words: frozenset[str]
    content: frozenset[str]  # words less connectors and stop words
    spelling: str  # its spelling key (`widen.text.forms.spelling_key`)
    junk: bool  # only numbers and stop words
    protected: bool


class Lexicon:
    """A bundle made ready for expansion. Parameters: `bundle`, an opened bundle.

    `options` are the expansion options the bundle was trained and gated with; `counts` and
    `title_share` say per entry how often the dump used it and how often in a title; `split_half`
    is the bundle's own "same job" cosine between two duties profiles (None without duties)."""

    def __init__(self, bundle: Bundle) -> None:
        self.bundle = bundle
        self.version = bundle.version
        self.created_at = bundle.created_at
        self.options: ExpansionOptions = options_of(bundle.manifest)
        self.keys = bundle.keys
        self.index = bundle.index
        self.protected = bundle.protected
        self.names = bundle.names
        self.phraser = bundle.phraser
        self.max_words = bundle.max_words
        # Plain arrays over the same memory-mapped pages (still shared between workers): indexing a
        # numpy memmap makes a memmap view each time, which costs more than the lookup itself.
        self.normed: npt.NDArray[np.float32] = np.asarray(bundle.normed_vectors)
        self.output_vectors: npt.NDArray[np.float32] = np.asarray(bundle.output_vectors)
        out = np.asarray(bundle.output_vectors, dtype=np.float32)
        norms = np.linalg.norm(out, axis=1)
        norms[norms == 0] = 1.0
        self.output_norms: npt.NDArray[np.float32] = norms.astype(np.float32)
        stats = np.asarray(bundle.entry_stats, dtype=np.float64)
        self.counts: npt.NDArray[np.float64] = stats[:, 0]
        self.title_share: npt.NDArray[np.float64] = stats[:, 1] / np.maximum(stats[:, 0], 1.0)
        split = bundle.manifest.split_half
        self.split_half: float | None = float(split) if split and bundle.duty_rows is not None else None
        rows = bundle.duty_rows
        #: For each entry, whether it has a duties profile (a plain list: one lookup per candidate).
        self.with_duties: list[bool] = (
            (np.asarray(rows) >= 0).tolist() if rows is not None and self.split_half is not None else []
        )
        #: Every word of every place and employer name.
        self.name_words: frozenset[str] = frozenset(w for k in self.protected for w in k.split(PHRASE_JOINER))

    def has_duties(self, j: int) -> bool:
        return bool(self.with_duties) and self.with_duties[j]

    def entry_facts(self, j: int, stop: frozenset[str], title_share: float = 0.0) -> EntryFacts:
        """What the filters need to know of entry j. An entry is protected when it is a place or employer
        name, or only words of such names and seldom a title ("community hospital" of "Hensby Community
        Hospital"; `title_share`, the option's bar)."""
        key = self.keys[j]
        phrase = phrase_of_key(key)
        words = frozenset(phrase.split(" "))
        piece = words <= self.name_words and self.title_share[j] < title_share
        return EntryFacts(
            phrase,
            words,
            words - stop,
            spelling_key(phrase, stop),
            all(w in stop or _NUMBER.match(w) or is_number(w) for w in words),
            key in self.protected or piece,
        )

    def duty_neighbours(self, j: int) -> dict[int, float]:
        """The titles whose duties are most alike entry j's, with their cosines; empty without a profile."""
        if not self.has_duties(j):
            return {}
        r = int(self.bundle.duty_rows[j])  # type: ignore[index]
        index = np.asarray(self.bundle.duty_index[r])  # type: ignore[index]
        sims = np.asarray(self.bundle.duty_similarity[r])  # type: ignore[index]
        return dict(zip(index.tolist(), sims.tolist(), strict=True))

    def different_jobs_cosine(self, quantile: float, related_duties: float) -> float | None:
        """The input cosine that `quantile` of the pairs of titles with different duties stay under in this
        bundle: how close two different jobs look to the skip-gram model of this dump. None without
        duties. Pairs are different when neither is among the other's titles with alike duties (at
        least `related_duties` of the split-half cosine); at most 2,000 titles are looked at."""
        rows = self.bundle.duty_rows
        if rows is None or self.split_half is None:
            return None
        titles = np.flatnonzero(np.asarray(rows) >= 0)[:2000]
        if len(titles) < 3:
            return None
        position = {int(j): n for n, j in enumerate(titles.tolist())}
        floor = related_duties * self.split_half
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

    def pattern_spellings(self, options: ExpansionOptions) -> dict[str, str]:
        """Spelling key -> pattern: the configured spellings, and the vocabulary entries of the dump that
        are the same words in another form ("nightshift" for "night shift", "weekend only")."""
        spellings = {key_of_phrase(phrase_of_text(s)): name for name, group in options.patterns.items() for s in group}
        forms = {spelling_key(phrase_of_key(k), frozenset()): name for k, name in spellings.items()}
        for key in self.keys:
            name = forms.get(spelling_key(phrase_of_key(key), frozenset()))
            if name is not None and key not in spellings and not set(key.split(PHRASE_JOINER)) & self.name_words:
                spellings[key] = name
        return spellings

    def used_spellings(self, pattern: str, spellings: dict[str, str]) -> list[str]:
        """The spellings of a pattern that the dump uses (their words are in the vocabulary), most used
        first; `spellings` is `pattern_spellings` of the options in use."""
        found = []
        for key, name in spellings.items():
            if name != pattern:
                continue
            rows = [self.index.get(w) for w in key.split(PHRASE_JOINER)]
            if self.index.get(key) is not None or all(r is not None for r in rows):
                j = self.index.get(key)
                count = self.counts[j] if j is not None else min(self.counts[r] for r in rows if r is not None)
                found.append((count, phrase_of_key(key)))
        return [s for _, s in sorted(found, key=lambda t: (-t[0], t[1]))]
