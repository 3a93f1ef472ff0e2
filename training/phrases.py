"""Learning the phrase passes with gensim Phrases, in repeated passes up to `max_words` words.

Pass one joins word pairs (and pairs around connector words: "head of care"); each later pass
can join a phrase to a neighbour. NPMI scoring (Bouma 2009, "Normalized (Pointwise) Mutual
Information in Collocation Extraction") is the default because its threshold means the same on
any corpus size; the count ratio of Mikolov et al. 2013 ("Distributed Representations of Words
and Phrases and their Compositionality"; gensim's default scorer) is offered too. A phrase
longer than `max_words` is never formed.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Collection, Iterable, Iterator
from pathlib import Path
from typing import Any

from gensim.models.phrases import FrozenPhrases, Phrases

from training.config import PhrasesSection
from training.counting import count_file, pass_counts
from widen.model.phrases import Phraser, PhraseRow
from widen.text.forms import PHRASE_JOINER, words_in

__all__ = ["ScratchPass", "learn_phrases", "phrase_filter"]

#: gensim's cap on the entries Phrases counts (its default): past it, gensim drops the rarest as it goes.
MAX_VOCAB = 40_000_000


class phrase_filter:
    """Which mined phrases to keep: none that joins a place or employer name (`protected`, keys, read
    when first asked, after the first pass), or a word that must stay `apart` (shift patterns, noise
    words), to other words ("sous chef orrinsby", "retail assistant f/t"). A name or a pattern of
    several words ("fennick cross", "part time", "night shift") is kept whole."""

    def __init__(self, protected: Callable[[], Collection[str]], apart: frozenset[str]) -> None:
        self._protected, self.apart = protected, apart
        self._keys: frozenset[str] | None = None
        self._lengths: tuple[int, ...] = ()

    def __call__(self, phrase: str) -> bool:
        if self._keys is None:
            self._keys = frozenset(self._protected())
            self._lengths = tuple(sorted({len(k.split(PHRASE_JOINER)) for k in self._keys}))
        words = phrase.split(PHRASE_JOINER)
        if phrase in self._keys:
            return True
        if any(w in self.apart for w in words) and not all(w in self.apart for w in words):
            return False
        for n in self._lengths:
            if n < len(words):
                spans = (PHRASE_JOINER.join(words[i : i + n]) for i in range(len(words) - n + 1))
                if any(span in self._keys for span in spans):
                    return False
        return True


class ScratchPass:
    """A phrase pass's sentences as a scratch file (`training.first_pass`): `make()` writes it (reading the
    dump, or applying the pass before) and returns it; it is then counted in runs by `workers` processes
    (`training.counting`) rather than sentence by sentence by gensim."""

    def __init__(self, make: Callable[[], Path], workers: int) -> None:
        self.make, self.workers = make, workers


def _sentences(scratch: Path) -> Iterator[list[str]]:
    with scratch.open(encoding="utf-8") as fh:
        for line in fh:
            yield line[2:].split()


def _counted(stream: Iterable[list[str]] | ScratchPass, config: PhrasesSection) -> Phrases:
    """gensim's Phrases with the counts of one pass: made in runs for a scratch file, by gensim for sentences."""
    settings: dict[str, Any] = {
        "min_count": config.min_count,
        "threshold": config.threshold,
        "scoring": "npmi" if config.scoring == "npmi" else "default",  # gensim's names
        "delimiter": PHRASE_JOINER,
        "connector_words": frozenset(config.bridge_words),
        "progress_per": 10**12,
        "max_vocab_size": MAX_VOCAB,
    }
    if not isinstance(stream, ScratchPass):
        return Phrases(stream, **settings)
    scratch = stream.make()
    count = functools.partial(pass_counts, bridges=settings["connector_words"], joiner=PHRASE_JOINER)
    counted = count_file(scratch, count, stream.workers)
    model = Phrases(None, **settings)
    if len(counted.vocab) > MAX_VOCAB:
        # gensim drops its rarest counts on the way past this size, which sums in parts cannot replay
        return Phrases(_sentences(scratch), **settings)
    model.vocab, model.corpus_word_count = counted.vocab, counted.words  # what Phrases.add_vocab keeps of a first count
    return model


def learn_phrases(
    first: Iterable[list[str]] | ScratchPass,
    again: Callable[[Phraser], Iterable[list[str]] | ScratchPass],
    config: PhrasesSection,
    on_pass: Callable[[int], None] | None = None,
    keep: Callable[[str], bool] | None = None,
) -> tuple[Phraser, list[PhraseRow]]:
    """Learn `max_words - 1` passes: the first over `first`, pass k over `again(pass k-1)`.

    `first` is the corpus's sentences, or a `ScratchPass` that reads and tokenises the dump into a
    scratch file; `again(newest)` must give the corpus as phrased so far with `newest` applied on top,
    so every pass is applied once, as when phrasing by hand. `keep`, when given, decides which mined
    phrases of each pass are kept (see `phrase_filter`).
    """
    passes: list[FrozenPhrases] = []
    table: list[PhraseRow] = []
    for number in range(1, config.max_words):
        stream = first if number == 1 else again(Phraser(passes[-1:]))
        model = _counted(stream, config)
        frozen = model.freeze()
        kept = {
            p: s for p, s in frozen.phrasegrams.items() if words_in(p) <= config.max_words and (keep is None or keep(p))
        }
        frozen.phrasegrams = kept
        for phrase in sorted(kept):
            table.append(PhraseRow(phrase, float(kept[phrase]), int(model.vocab.get(phrase, 0)), number))
        passes.append(frozen)
        if on_pass is not None:
            on_pass(number)
        if not kept:
            break
    if config.max_words == 1:  # no phrase pass, but the corpus must still be read once
        if isinstance(first, ScratchPass):
            first.make()
        else:
            for _ in first:
                pass
    return Phraser(passes), table
