"""What expansion works out once per bundle and keeps: one object, with typed keys, beside the lexicon.

Two kinds of thing are kept, each in its own bounded table:

- *derived data*, always kept: segmentation's vocabulary and the pattern spellings per set of
  options, each entry's facts and duties neighbours, each title's words vector and whether it is a
  typo of another, the different-jobs cosine per quantile, the spelling index. Working them out
  again gives the same values; keeping them only saves time.
- *answers*, kept unless `keep_answers` is False: a known entry's candidates and what the bundle
  and the options alone decide of each (`Decided`), while the entry may be worked out again (a head
  word, a reason asked for; `let_go` otherwise: tens of objects an entry that the garbage
  collector would walk on every full pass), a known or composed span's whole expansion when
  nothing in the query or the decisions can change it, the whole answer to an entry typed alone,
  and what each span adds to an answer at each position (`widen.expansion.pieces`). With
  `keep_answers=False` every call works these out again, and every answer as a whole: the
  reference the tests compare the kept answers with, byte for byte.

Each table's key is a tuple of what its values depend on, its type named below (`SpanKey`: entry,
parts, options, explain, the query's jobs); options are hashable (`ExpansionOptions`), so equal
options are one key whichever object holds them. Plain tuples, not named ones: one is made for most
queries, and a plain tuple is the cheapest to make and hash. The cache belongs to one lexicon.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Hashable
from typing import TYPE_CHECKING, NamedTuple, TypeVar

import numpy as np
import numpy.typing as npt

from widen.expansion.lexicon import EntryFacts, Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.result import Clause, ConceptClause, Dropped, Expansion, ModelInfo, Segment
from widen.expansion.segment import Span, Vocabulary
from widen.expansion.spelling import LazySpeller, Speller, no_correction
from widen.expansion.typos import mistyped

if TYPE_CHECKING:
    from widen.expansion.candidates import Candidate
    from widen.expansion.filters import Decided
    from widen.expansion.pieces import Piece

__all__ = [
    "ExpansionCache",
    "Answer",
    "AloneKey",
    "CandidatesKey",
    "DecidedKey",
    "EntryKey",
    "SidesKey",
    "SpanKey",
    "SpanOutcome",
    "PieceKey",
]

K = TypeVar("K", bound=Hashable)
V = TypeVar("V")


#: (the span's key, how many candidates)
CandidatesKey = tuple[str, int]


#: (the span's key, options)
DecidedKey = tuple[str, ExpansionOptions]


#: (the span's key, the parts it is composed of (none for a known entry), options, explain, the query's
#: job spans where its filters read them (`QueryContext.jobs`))
SpanKey = tuple[str, tuple[str, ...], ExpansionOptions, bool, tuple[tuple[str, tuple[str, ...]], ...]]


#: (the key typed alone, options)
AloneKey = tuple[str, ExpansionOptions]


#: (pattern, the spelling typed, options)
SidesKey = tuple[str, str, ExpansionOptions]


#: (the span, its position in the query, options)
PieceKey = tuple[Span, int, ExpansionOptions]


#: (key, stop words, title share bar)
EntryKey = tuple[str, frozenset[str], float]


class _VocabularyKey(NamedTuple):
    noise_words: tuple[str, ...]
    modifiers: tuple[str, ...]
    patterns: tuple[tuple[str, tuple[str, ...]], ...]
    spelling: bool
    compose_runs: int


class SpanOutcome(NamedTuple):
    """A job span's expansions (its correction aside) and, when explained, its drops with reasons."""

    kept: tuple[Expansion, ...]
    dropped: tuple[Dropped, ...]


class Answer(NamedTuple):
    """The whole answer to a query, but the echoed query itself."""

    segments: list[Segment]
    clauses: list[Clause]
    query_text: str
    full_query: str
    concepts: tuple[ConceptClause, ...] = ()
    concept_text: str = ""


class _Table(dict[K, V]):
    """A dict that stops growing at `limit` (a bound no real vocabulary reaches), and keeps nothing when
    it is off; a dict, so a lookup costs what a dict's does."""

    def __init__(self, limit: int, on: bool = True) -> None:
        super().__init__()
        self.limit, self.on = limit, on

    def keep(self, key: K, value: V) -> V:
        if self.on and len(self) < self.limit:
            self[key] = value
        return value

    def drop(self, key: K) -> None:
        self.pop(key, None)


class ExpansionCache:
    """What expansion keeps for one lexicon. Parameters: `lexicon`; `keep_answers` (see the module)."""

    def __init__(self, lexicon: Lexicon, keep_answers: bool = True) -> None:
        self.lexicon = lexicon
        self.version = lexicon.version
        self.keep_answers = keep_answers
        self.candidates: _Table[CandidatesKey, tuple[Candidate, ...]] = _Table(2_000_000, keep_answers)
        self.decided: _Table[DecidedKey, tuple[Decided, ...]] = _Table(2_000_000, keep_answers)
        self.spans: _Table[SpanKey, SpanOutcome] = _Table(2_000_000, keep_answers)
        self.alone: _Table[AloneKey, Answer] = _Table(2_000_000, keep_answers)
        self.sides: _Table[SidesKey, tuple[Expansion, ...]] = _Table(100_000, keep_answers)
        self.pieces: _Table[PieceKey, Piece] = _Table(200_000, keep_answers)
        #: The bundle a result came from: one object per bundle (results are never changed in place).
        self.model_info = ModelInfo.model_construct(version=lexicon.version, created_at=lexicon.created_at)
        self._entries: _Table[EntryKey, EntryFacts] = _Table(1_000_000)
        self._duties: _Table[str, dict[str, float]] = _Table(1_000_000)
        self._apart: _Table[tuple[float, float], float | None] = _Table(1024)
        self._vocabularies: _Table[_VocabularyKey, Vocabulary] = _Table(1024)
        self._vocabulary_of: _Table[ExpansionOptions, Vocabulary] = _Table(1024)
        self._spellings: _Table[tuple[str, _VocabularyKey], tuple[str, ...]] = _Table(100_000)
        self._title_vectors: _Table[str, npt.NDArray[np.float32] | None] = _Table(2_000_000)
        self._mistyped: _Table[tuple[str, tuple[str, ...]], bool] = _Table(2_000_000)
        self._speller = LazySpeller(lexicon)
        self._word_speller = LazySpeller(lexicon, titles=False)
        self._lock = threading.Lock()

    def forget_answers(self) -> None:
        """Let go of every answer kept (the derived data stays): a worker's state before its first query."""
        for table in (self.candidates, self.decided, self.spans, self.alone, self.sides, self.pieces):
            table.clear()

    def let_go(self, key: str, options: ExpansionOptions) -> None:
        """Let go of an entry's candidates and what the filters decided of them (its outcome stays)."""
        self.candidates.drop((key, options.candidates))
        self.decided.drop((key, options))

    def answers(self) -> int:
        """How many answers are kept (all tables of answers together)."""
        tables = (self.candidates, self.decided, self.spans, self.alone, self.sides, self.pieces)
        return sum(len(table) for table in tables)

    def _derived(self, table: _Table[K, V], key: K, make: Callable[[], V]) -> V:
        found = table.get(key)
        if found is None:
            found = table.keep(key, make())
        return found

    # -- derived data, always kept ---------------------------------------------------------------

    def entry(self, key: str, stop: frozenset[str], title_share: float) -> EntryFacts:
        found = self._entries.get((key, stop, title_share))  # no `_derived`: called for every candidate
        if found is None:
            found = self._entries.keep((key, stop, title_share), self.lexicon.entry_facts(key, stop, title_share))
        return found

    def duty_neighbours(self, key: str) -> dict[str, float]:
        """The titles whose duties are most alike those of title `key` (callers must not change the dict)."""
        return self._derived(self._duties, key, lambda: self.lexicon.duty_neighbours(key))

    def title_vector(self, key: str) -> npt.NDArray[np.float32] | None:
        """A title's unit vector: its own where it has one, else the mean of its known words'."""
        found = self._title_vectors.get(key)
        if found is None and key not in self._title_vectors:
            j = self.lexicon.index.get(key)
            found = self._title_vectors.keep(
                key, np.asarray(self.lexicon.normed[j]) if j is not None else self.lexicon.words_vector(key)
            )
        return found

    def mistyped(self, key: str, noise: tuple[str, ...]) -> bool:
        """Whether the title `key` is one an employer mistyped (`widen.expansion.typos.mistyped`, towards
        the vocabulary's words), worked out once per title and noise words."""
        found = self._mistyped.get((key, noise))
        if found is None:
            found = self._mistyped.keep((key, noise), mistyped(self.lexicon, key, noise, self.word_speller().near))
        return found

    def different_jobs_cosine(self, options: ExpansionOptions) -> float | None:
        """`Lexicon.different_jobs_cosine` at the options' quantile, worked out once per quantile."""
        quantile, related = options.apart_quantile(), options.related_duties
        key = (quantile, related)
        if key not in self._apart:
            return self._apart.keep(key, self.lexicon.different_jobs_cosine(quantile, related))
        return self._apart[key]

    def speller(self) -> Speller:
        return self._speller.get()

    def word_speller(self) -> Speller:
        """A speller towards the vocabulary's words alone (no title words: a title's typo is not one)."""
        return self._word_speller.get()

    @staticmethod
    def _marker(options: ExpansionOptions) -> _VocabularyKey:
        return _VocabularyKey(
            options.noise_words,
            options.modifiers,
            tuple(sorted(options.patterns.items())),
            options.spelling,
            options.compose_runs,
        )

    def vocabulary(self, options: ExpansionOptions) -> Vocabulary:
        """Segmentation's view of the bundle under `options`, built once per set of options that differ
        in what segmentation reads (noise words, modifiers, patterns, spelling)."""
        found = self._vocabulary_of.get(options)
        if found is not None:
            return found
        marker = self._marker(options)
        found = self._vocabularies.get(marker)
        if found is None:
            with self._lock:
                lex = self.lexicon
                names = {k: field for k, (field, _) in lex.names.items()}
                names.update({k: "protected" for k in lex.protected if k not in names})
                found = self._vocabularies.keep(
                    marker,
                    Vocabulary(
                        lex.index.keys() | lex.title_row.keys(),  # a title may have no vector
                        names,
                        frozenset(w for n in options.noise_words for w in n.split(" ")),
                        frozenset(options.modifiers),
                        lex.pattern_spellings(options),
                        self._speller.correct if options.spelling else no_correction,
                        options.compose_runs,
                        lex.title_words,
                    ),
                )
        return self._vocabulary_of.keep(options, found)

    def used_spellings(self, pattern: str, options: ExpansionOptions) -> list[str]:
        """The spellings of a pattern that the dump uses, most used first; once per pattern and options."""
        key = (pattern, self._marker(options))
        found = self._spellings.get(key)
        if found is None:
            made = self.lexicon.used_spellings(pattern, dict(self.vocabulary(options).spellings))
            found = self._spellings.keep(key, tuple(made))
        return list(found)
