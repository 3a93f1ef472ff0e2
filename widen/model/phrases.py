"""Phrase passes: how the corpus was phrased, applied the same way to postings and to queries.

The passes are learned by `training.phrases` with gensim Phrases and kept in a bundle as
plain JSON (opening a bundle never unpickles code). Pass one joins word pairs (and pairs
around connector words: "head of care"); each later pass can join a phrase to a neighbour.
A last pass joins the dump's frequent job titles ("early years practitioner") even where the
statistics of the passes before did not.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any, Literal

from gensim.models.phrases import FrozenPhrases, npmi_scorer, original_scorer

from widen.text.forms import PHRASE_JOINER

__all__ = ["BRIDGE_WORDS", "PhraseRow", "Phraser", "Scoring"]

#: Words a phrase may bridge over without counting them ("head of care", "front of house"): the
#: same list as gensim's English list for its Phrases (ENGLISH_CONNECTOR_WORDS), written out so the
#: config shows them and a team can change them (`phrases.bridge_words`).
BRIDGE_WORDS = ["a", "an", "and", "at", "by", "for", "from", "in", "of", "on", "or", "the", "to", "with", "without"]

#: The phrase scorers, named for what they compute: `npmi` is normalised pointwise mutual
#: information (Bouma 2009); `count_ratio` is (count(a b) - min_count) / (count(a) count(b))
#: times the vocabulary size (Mikolov et al. 2013), gensim's "default" scorer.
Scoring = Literal["npmi", "count_ratio"]
_SCORERS = {"npmi": npmi_scorer, "count_ratio": original_scorer}


@dataclass(frozen=True)
class PhraseRow:
    """One mined phrase, for review: its words, score, corpus count and the pass that formed it."""

    phrase: str
    score: float
    count: int
    pass_number: int


def scorer(name: str) -> Any:
    """gensim's scoring function for a scorer name of ours ("default" is the old name of count_ratio)."""
    return _SCORERS["count_ratio" if name == "default" else name]


class _Pass:
    """One frozen gensim pass applied to a sentence as `FrozenPhrases.analyze_sentence` applies it
    (gensim's own code is the reference; `tests/test_real_titles.py` compares the two on real text),
    as one plain loop: gensim's is a generator of pairs and a method call a candidate (4x faster on a
    query, 1.5x on a posting's sentence). Two neighbours are looked up as a pair among the phrases
    that score, cut in two at each joiner (`_pairs`), with no string made; a candidate over bridge
    words only when its first part begins a phrase of the pass (`_begins`). Both give gensim's
    answer: a phrase outside them cannot score."""

    def __init__(self, frozen: FrozenPhrases) -> None:
        self.grams: dict[str, float] = frozen.phrasegrams
        self.threshold = frozen.threshold
        self.delimiter: str = frozen.delimiter
        self.bridges: frozenset[str] = frozenset(frozen.connector_words)
        self._begins = {k[:n] for k in self.grams for n in _cuts(k, self.delimiter)}
        size = len(self.delimiter)
        #: Every phrase that scores, cut in two at each joiner: a pair of neighbours is a phrase when it
        #: is one of these, with no string made to look it up.
        self._pairs = {
            (k[:n], k[n + size :])
            for k, v in self.grams.items()
            if v > self.threshold
            for n in _cuts(k, self.delimiter)
        }

    def __call__(self, sentence: list[str]) -> list[str]:
        grams, threshold, joiner = self.grams, self.threshold, self.delimiter
        bridges, begins, pairs = self.bridges, self._begins, self._pairs
        out: list[str] = []
        start: str | None = None
        between: list[str] = []
        for word in sentence:
            if word not in bridges:
                if start:
                    if not between:
                        if (start, word) in pairs:
                            out.append(start + joiner + word)
                            start = None
                            continue
                    elif start in begins:
                        phrase = joiner.join([start, *between, word])
                        if grams.get(phrase, _NEVER) > threshold:
                            out.append(phrase)
                            start, between = None, []
                            continue
                    out.append(start)
                    out += between
                start, between = word, []
            elif start:
                between.append(word)
            else:
                out.append(word)
        if start:
            out.append(start)
            out += between
        return out


def _cuts(key: str, joiner: str) -> Iterator[int]:
    """Where `joiner` starts in `key`."""
    n = key.find(joiner)
    while n >= 0:
        yield n
        n = key.find(joiner, n + 1)


_NEVER = float("-inf")  # gensim's NEGATIVE_INFINITY: the score of a phrase the pass never formed


class Phraser:
    """The frozen phrase passes, then the title pass, applied in order; the same object segments corpus
    and queries. Parameters: the gensim passes; `titles`, the keys of the titles the last pass joins."""

    def __init__(self, passes: list[FrozenPhrases], titles: Iterable[str] = ()) -> None:
        self.passes = passes
        self._applied = [_Pass(frozen) for frozen in passes]
        self.titles = frozenset(titles)
        self._title_words = {tuple(t.split(PHRASE_JOINER)) for t in self.titles}
        self._longest = max((len(w) for w in self._title_words), default=0)
        #: Every proper beginning of a title, joined: an entry that is none of them starts no title,
        #: and a run of entries that is none of them grows into none.
        self._starts = {PHRASE_JOINER.join(w[:n]) for w in self._title_words for n in range(1, len(w))}

    def __call__(self, sentence: list[str]) -> list[str]:
        for applied in self._applied:
            sentence = applied(sentence)
        return self._join_titles(sentence) if self._title_words else sentence

    def _join_titles(self, entries: list[str]) -> list[str]:
        """Greedy longest match of the titles over whole entries ("early_years" + "practitioner")."""
        starts = self._starts
        if starts.isdisjoint(entries):  # most sentences: no entry starts a title
            return entries
        out: list[str] = []
        i = 0
        while i < len(entries):
            if entries[i] not in starts:
                out.append(entries[i])
                i += 1
                continue
            best, words = i, entries[i].split(PHRASE_JOINER)
            for j in range(i + 1, len(entries)):
                words = words + entries[j].split(PHRASE_JOINER)
                if len(words) > self._longest:
                    break
                if tuple(words) in self._title_words:
                    best = j
                if PHRASE_JOINER.join(words) not in starts:
                    break
            out.append(PHRASE_JOINER.join(entries[i : best + 1]) if best > i else entries[i])
            i = best + 1
        return out

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
                    "scoring": "npmi" if p.scoring is npmi_scorer or p.scoring == "npmi" else "count_ratio",
                    "delimiter": p.delimiter,
                    "bridge_words": sorted(p.connector_words),
                    "phrasegrams": {k: float(v) for k, v in sorted(p.phrasegrams.items())},
                }
                for p in self.passes
            ],
            "titles": sorted(self.titles),
        }

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> Phraser:
        passes = []
        for item in data["passes"]:
            # FrozenPhrases is built from a trained Phrases; here we restore its exported state.
            frozen = FrozenPhrases.__new__(FrozenPhrases)
            frozen.threshold = item["threshold"]
            frozen.min_count = item["min_count"]
            frozen.scoring = scorer(item["scoring"])
            frozen.delimiter = item["delimiter"]
            # gensim calls them connector words; bundles before the rename wrote that name
            frozen.connector_words = frozenset(item.get("bridge_words", item.get("connector_words", ())))
            frozen.phrasegrams = dict(item["phrasegrams"])
            passes.append(frozen)
        return cls(passes, data.get("titles", ()))
