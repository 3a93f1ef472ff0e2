"""A bundle made ready for expansion: its arrays and lookups, built once at load and never changed.

Plain read-only data, the way gensim's KeyedVectors is: every method here reads the bundle and
works something out again each time it is called. What is worth keeping once worked out (per
entry, per set of options) is kept by `widen.expansion.cache.ExpansionCache`, not here.
"""

from __future__ import annotations

import re
from bisect import bisect_right
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.expansion.options import ExpansionOptions, options_of
from widen.model.bundle import Bundle
from widen.model.concepts import ConceptSet, PostingVectors, tag_rows
from widen.text.forms import PHRASE_JOINER, key_of_phrase, phrase_of_key, phrase_of_text, spelling_key
from widen.text.tokenize import is_number

__all__ = ["Lexicon", "EntryFacts", "head_of"]


def _rising(sizes: list[int]) -> list[int]:
    """The profile sizes a bundle measured at, which rise (`training.duties`): looked up by bisection."""
    if list(sizes) != sorted(sizes):
        raise ValueError(f"the bundle's profile sizes do not rise: {sizes}")
    return sizes


_NUMBER = re.compile(r"^[\d.,/:%+#-]+(?:st|nd|rd|th|k|hr|pm|am)?$")
#: Words after which a title says what the job is about, not what it is ("manager in hardware").
_ABOUT = frozenset({"in", "of", "for", "at", "on", "with", "from", "by", "to"})


def head_of(phrase: str) -> str:
    """The word of a title that names the job: the last word before "in", "of", "for"... ("manager" of
    "import manager in hardware", "head" of "head of care"), else the last word ("manager" of
    "accommodation manager"). Common practice in reading English noun phrases, no single source."""
    words = phrase.split(" ")
    for n, word in enumerate(words):
        if word in _ABOUT and n > 0:
            return words[n - 1]
    return words[-1]


@dataclass(frozen=True)
class EntryFacts:
    """What the filters need to know of one vocabulary entry under one stop list."""

    phrase: str
    words: frozenset[str]
    content: frozenset[str]  # words less connectors and stop words
    spelling: str  # its spelling key (`widen.text.forms.spelling_key`)
    junk: bool  # only numbers and stop words
    protected: bool
    head: str  # what job a title names: its last word, or the word before "in", "of", "for"... (`head_of`)


class Lexicon:
    """A bundle made ready for expansion. Parameters: `bundle`, an opened bundle.

    `options` are the expansion options the bundle was trained and gated with; `counts` and
    `title_share` say per entry how often the dump used it and how often in a title; `split_half`
    is the bundle's own "same job" cosine between two duties profiles (None without duties).
    `titles` are the titles with a duties profile (a title need not be a vocabulary entry: one seen
    in a handful of postings has a profile and no vector), with how many postings name each."""

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
        titles = bundle.title_keys or []
        self.split_half: float | None = float(split) if split and titles else None
        #: The titles with a duties profile, their rows, and how many postings name each.
        self.titles: list[str] = titles if self.split_half is not None else []
        self.title_row: dict[str, int] = {k: r for r, k in enumerate(self.titles)}
        self.title_postings: list[int] = bundle.title_counts if self.split_half is not None else []
        #: The most words a title has: segmentation matches titles up to this long.
        self.longest_title = max((k.count(PHRASE_JOINER) + 1 for k in self.titles), default=0)
        #: The titles by their words with one of them left out: titles that differ in one word only.
        self.titles_but_one: dict[tuple[str, ...], list[str]] = {}
        for k in self.titles:
            words = k.split(PHRASE_JOINER)
            for n in range(len(words)):
                self.titles_but_one.setdefault((*words[:n], "", *words[n + 1 :]), []).append(k)
        #: Every word of every title: real words of the dump, however seldom used.
        self.title_words: frozenset[str] = frozenset(w for k in self.titles for w in k.split(PHRASE_JOINER))
        #: The titles by their head word: those that name the same kind of job.
        self.titles_by_head: dict[str, list[str]] = {}
        for k in self.titles:
            self.titles_by_head.setdefault(head_of(phrase_of_key(k)), []).append(k)
        #: For each entry, whether it has a duties profile (a plain list: one lookup per candidate).
        self.with_duties: list[bool] = [k in self.title_row for k in self.keys]
        duties = bundle.manifest.duties
        self._sizes = _rising(duties.sizes)
        self._same_job = duties.same_job
        self._chance = duties.chance
        #: The concepts postings are tagged with, and the recipe of their vectors (None without concepts).
        self.concepts: ConceptSet | None = bundle.concepts
        self.posting_vectors: PostingVectors | None = None
        if self.concepts is not None:
            c = self.concepts
            self.posting_vectors = PostingVectors(
                self.normed, self.index, self.counts, self.phraser, self.protected, c.title_weight, c.sif_a, c.common
            )
        #: Every word of every place and employer name.
        self.name_words: frozenset[str] = frozenset(w for k in self.protected for w in k.split(PHRASE_JOINER))

    @property
    def concept_lineage(self) -> str | None:
        """The lineage of the bundle's concepts: tokens of one lineage keep their meaning (None without)."""
        return self.concepts.lineage if self.concepts is not None else None

    def tag(self, postings: Sequence[tuple[str, str]]) -> list[list[str]]:
        """The concept tokens of each (title, description), one list a posting (empty without concepts)."""
        if self.concepts is None or self.posting_vectors is None:
            return [[] for _ in postings]
        return tag_rows(self.concepts, self.posting_vectors.of_postings(postings))

    def has_duties(self, j: int) -> bool:
        return self.with_duties[j]

    def busiest(self) -> list[str]:
        """Every entry and title, in the order a server prepares them (`widen.expansion.expand.prepare`):
        the titles with a duties profile, those the most postings name first (what seekers type: most
        of them are seen too seldom to have a vector of their own), then the other entries, those the
        most postings use first; ties in the bundle's order. Chosen on the 200,000-posting real-title
        board's day over the entries by use alone (`docs/benchmarks.md`)."""
        rows = sorted(range(len(self.titles)), key=lambda r: -self.title_postings[r])
        order = [self.titles[r] for r in rows]
        taken = set(order)
        order += [k for k in (self.keys[int(j)] for j in np.argsort(-self.counts, kind="stable")) if k not in taken]
        return order

    def words_vector(self, key: str) -> npt.NDArray[np.float32] | None:
        """The normalised mean of the input vectors of a key's known words; None when it knows none."""
        rows = [self.index[w] for w in key.split(PHRASE_JOINER) if w in self.index]
        if not rows:
            return None
        mean = np.asarray(self.normed[rows]).mean(axis=0)
        norm = float(np.linalg.norm(mean))
        vector: npt.NDArray[np.float32] = (mean / norm if norm else mean).astype(np.float32)
        return vector

    def postings_of(self, key: str) -> int:
        """How many postings name `key` as their title; 0 for no title with a profile."""
        r = self.title_row.get(key)
        return 0 if r is None else self.title_postings[r]

    def share_of(self, key: str) -> float:
        """How often an entry is used in titles; 1 for a title that is no vocabulary entry."""
        j = self.index.get(key)
        return float(self.title_share[j]) if j is not None else 1.0

    def _at(self, table: list[list[float | None]], a: int, b: int) -> float | None:
        """The table's value for profiles of `a` and `b` postings, each size taken down to the nearest
        size measured; None where the bundle measured none."""
        if not table or not self._sizes or a < 1 or b < 1:
            return None
        # The last size measured at or below each (the first where none is): sizes rise (`training.duties`).
        i = max(bisect_right(self._sizes, a) - 1, 0)
        j = max(bisect_right(self._sizes, b) - 1, 0)
        found = table[i][j]
        if found is None:  # not enough titles that deep: the largest measured size below
            for n in range(min(i, j), -1, -1):
                if table[n][n] is not None:
                    return table[n][n]
        return found

    def same_job(self, a: int, b: int) -> float:
        """The cosine two profiles of one job reach in this bundle when made from `a` and `b` postings;
        the split-half cosine (large sizes) where the bundle has no measure for those sizes."""
        if not self._sizes or min(a, b) > self._sizes[-1]:
            return self.split_half or 0.0
        found = self._at(self._same_job, a, b)
        return found if found is not None else (self.split_half or 0.0)

    def chance(self, a: int, b: int, quantile: str) -> float:
        """The cosine that profiles of two different titles, of `a` and `b` postings, stay under with the
        given probability in this bundle (0 where it was not measured)."""
        found = self._at(self._chance.get(quantile, []), a, b)
        return found if found is not None else 0.0

    def entry_facts(self, key: str, stop: frozenset[str], title_share: float = 0.0) -> EntryFacts:
        """What the filters need to know of an entry or title. It is protected when it is a place or
        employer name, or only words of such names and seldom a title ("community hospital" of "Hensby
        Community Hospital"; `title_share`, the option's bar)."""
        phrase = phrase_of_key(key)
        words = frozenset(phrase.split(" "))
        piece = words <= self.name_words and self.share_of(key) < title_share
        return EntryFacts(
            phrase,
            words,
            words - stop,
            spelling_key(phrase, stop),
            all(w in stop or _NUMBER.match(w) or is_number(w) for w in words),
            key in self.protected or piece,
            head_of(phrase),
        )

    def duty_neighbours(self, key: str) -> dict[str, float]:
        """The titles whose duties are most alike those of title `key`, with their cosines; empty without
        a profile."""
        r = self.title_row.get(key)
        if r is None or self.bundle.title_index is None or self.bundle.title_similarity is None:
            return {}
        index = np.asarray(self.bundle.title_index[r]).tolist()
        sims = np.asarray(self.bundle.title_similarity[r]).tolist()
        return {self.titles[t]: s for t, s in zip(index, sims, strict=True) if t >= 0}

    def different_jobs_cosine(self, quantile: float, related_duties: float) -> float | None:
        """The input cosine that `quantile` of the pairs of titles with different duties stay under in this
        bundle: how close two different jobs look to the skip-gram model of this dump. None without
        duties. Pairs are different when neither is among the other's titles with alike duties (at
        least `related_duties` of the split-half cosine); at most 2,000 titles are looked at."""
        if self.split_half is None:
            return None
        entries = [k for k in self.titles if k in self.index][:2000]
        titles = np.asarray([self.index[k] for k in entries], dtype=np.int64)
        if len(titles) < 3:
            return None
        position = {k: n for n, k in enumerate(entries)}
        floor = related_duties * self.split_half
        close = np.eye(len(titles), dtype=bool)
        for n, key in enumerate(entries):
            for other, s in self.duty_neighbours(key).items():
                m = position.get(other)
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
