"""A bundle made ready for expansion: arrays and lookups built once, at load, never per query."""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from widen.bundle import Bundle
from widen.options import ExpansionOptions
from widen.text import display, form

__all__ = ["Lexicon", "Entry"]

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


class Lexicon:
    """A bundle made ready for expansion. Parameters: `bundle`, an opened bundle."""

    def __init__(self, bundle: Bundle) -> None:
        self.bundle = bundle
        self.version = bundle.version
        self.created_at = bundle.created_at
        self.options: ExpansionOptions = bundle.options
        self.keys = bundle.keys
        self.index = bundle.index
        self.protected = bundle.protected
        self.phraser = bundle.phraser
        self.max_words = bundle.max_words
        self.normed = bundle.normed_vectors
        out = np.asarray(bundle.output_vectors, dtype=np.float32)
        norms = np.linalg.norm(out, axis=1)
        norms[norms == 0] = 1.0
        self.output_norms: npt.NDArray[np.float32] = norms.astype(np.float32)
        stats = np.asarray(bundle.entry_stats, dtype=np.float64)
        self.title_share: npt.NDArray[np.float64] = stats[:, 1] / np.maximum(stats[:, 0], 1.0)
        self._entries: dict[tuple[int, frozenset[str]], Entry] = {}

    def entry(self, j: int, stop: frozenset[str]) -> Entry:
        """What the filters need to know of entry j, worked out once per entry and stop list."""
        found = self._entries.get((j, stop))
        if found is None:
            key = self.keys[j]
            phrase = display(key)
            words = frozenset(phrase.split(" "))
            found = Entry(
                phrase,
                words,
                words - stop,
                form(phrase, stop),
                all(w in stop or _NUMBER.match(w) for w in words),
                key in self.protected,
            )
            if len(self._entries) < 1_000_000:
                self._entries[(j, stop)] = found
        return found
