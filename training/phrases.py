"""Phrase mining with gensim Phrases, in repeated passes up to `max_words` words.

Pass one joins word pairs (and pairs around connector words: "head of care"); each
later pass can join a phrase to a neighbour. NPMI scoring (Bouma 2009, "Normalized
(Pointwise) Mutual Information in Collocation Extraction") is the default because its
threshold means the same on any corpus size; gensim's default scorer (Mikolov et al.
2013, "Distributed Representations of Words and Phrases and their Compositionality")
is offered too. A phrase longer than `max_words` is never formed.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from typing import Any

from gensim.models.phrases import FrozenPhrases, Phrases, npmi_scorer, original_scorer

from training.config import PhrasesSection
from training.tokenize import PHRASE_JOINER

__all__ = ["PhraseRow", "Phraser", "learn_phrases"]


@dataclass(frozen=True)
class PhraseRow:
    """One mined phrase, for review: its words, score, corpus count and the pass that formed it."""

    phrase: str
    score: float
    count: int
    pass_number: int


class Phraser:
    """The frozen phrase passes, applied in order; the same object segments corpus and queries."""

    def __init__(self, passes: list[FrozenPhrases]) -> None:
        self.passes = passes

    def __call__(self, sentence: list[str]) -> list[str]:
        for frozen in self.passes:
            sentence = frozen[sentence]
        return sentence

    def stream(self, sentences: Iterable[list[str]]) -> Iterator[list[str]]:
        for sentence in sentences:
            yield self(sentence)

    def to_json(self) -> dict[str, Any]:
        """A plain-data form for the bundle (no pickle: a bundle never runs code when opened)."""
        return {
            "passes": [
                {
                    "threshold": float(p.threshold),
                    "min_count": int(p.min_count),
                    "scoring": "npmi" if p.scoring is npmi_scorer or p.scoring == "npmi" else "default",
                    "delimiter": p.delimiter,
                    "connector_words": sorted(p.connector_words),
                    "phrasegrams": {k: float(v) for k, v in sorted(p.phrasegrams.items())},
                }
                for p in self.passes
            ]
        }

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> Phraser:
        passes = []
        for item in data["passes"]:
            # FrozenPhrases is built from a trained Phrases; here we restore its exported state.
            frozen = FrozenPhrases.__new__(FrozenPhrases)
            frozen.threshold = item["threshold"]
            frozen.min_count = item["min_count"]
            frozen.scoring = npmi_scorer if item["scoring"] == "npmi" else original_scorer
            frozen.delimiter = item["delimiter"]
            frozen.connector_words = frozenset(item["connector_words"])
            frozen.phrasegrams = dict(item["phrasegrams"])
            passes.append(frozen)
        return cls(passes)


def words_in(entry: str) -> int:
    return entry.count(PHRASE_JOINER) + 1


def learn_phrases(
    first: Iterable[list[str]],
    again: Callable[[Phraser], Iterable[list[str]]],
    config: PhrasesSection,
    on_pass: Callable[[int], None] | None = None,
) -> tuple[Phraser, list[PhraseRow]]:
    """Learn `max_words - 1` passes: the first over `first`, pass k over `again(pass k-1)`.

    `first` may be the stream that reads and tokenises the corpus, so pass one costs no extra
    read; `again(newest)` must stream the corpus as phrased so far with `newest` applied on top,
    so every pass is applied once, as when phrasing by hand.
    """
    passes: list[FrozenPhrases] = []
    table: list[PhraseRow] = []
    for number in range(1, config.max_words):
        stream = first if number == 1 else again(Phraser(passes[-1:]))
        model = Phrases(
            stream,
            min_count=config.min_count,
            threshold=config.threshold,
            scoring=config.scoring,
            delimiter=PHRASE_JOINER,
            connector_words=frozenset(config.connector_words),
            progress_per=10**12,
        )
        frozen = model.freeze()
        kept = {p: s for p, s in frozen.phrasegrams.items() if words_in(p) <= config.max_words}
        frozen.phrasegrams = kept
        for phrase in sorted(kept):
            table.append(PhraseRow(phrase, float(kept[phrase]), int(model.vocab.get(phrase, 0)), number))
        passes.append(frozen)
        if on_pass is not None:
            on_pass(number)
        if not kept:
            break
    if config.max_words == 1:
        for _ in first:  # no phrase pass, but the stream must still be read once
            pass
    return Phraser(passes), table
