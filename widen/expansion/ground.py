"""What the fixed filters read of a span itself, the bundle and the options (`widen.expansion.filters`)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from widen.expansion.cache import ExpansionCache
from widen.expansion.candidates import Candidate
from widen.expansion.lexicon import Lexicon, head_of
from widen.expansion.options import ExpansionOptions
from widen.text.forms import spelling_key

__all__ = ["Ground", "ground"]


@dataclass(frozen=True)
class Ground:
    """What the fixed filters read of the span itself, the bundle and the options."""

    lexicon: Lexicon
    options: ExpansionOptions
    own_words: frozenset[str]
    own_core: frozenset[str]  # its words less modifiers and pattern words
    own_spelling: str
    modifiers: frozenset[str]
    apart: float  # input cosine two different jobs reach in this bundle (no duties profile)
    titled: bool  # the bundle has duties profiles
    own_share: float
    own_postings: int  # how many postings name the span as their title (0: no title with a profile)
    own_head: str  # the word of the span's title that names the job
    correct: Callable[[str], str | None]  # spelling correction towards the vocabulary's words
    typo: Callable[[str], bool]  # a title an employer mistyped (`ExpansionCache.mistyped`: kept per title)
    sizes: dict[int, tuple[float, float]] = field(default_factory=dict)  # per candidate's profile size

    def misspelled(self, key: str) -> bool:
        """A title an employer mistyped (`widen.expansion.typos.mistyped`)."""
        return self.typo(key)

    def same_job(self, c: Candidate) -> float:
        """The duties cosine one job reaches with itself at the sizes of the span's and `c`'s profiles."""
        return self._at_size(c.postings)[0]

    def by_chance(self, c: Candidate) -> float:
        """The duties cosine two different jobs stay under (at `chance_duties`) at these sizes."""
        return self._at_size(c.postings)[1]

    def _at_size(self, postings: int) -> tuple[float, float]:
        """Both cosines for a candidate profile of `postings` postings, worked out once a size."""
        found = self.sizes.get(postings)
        if found is None:
            quantile = self.options.chance_duties
            chance = 0.0 if quantile == "off" else self.lexicon.chance(self.own_postings, postings, quantile)
            found = self.sizes[postings] = (self.lexicon.same_job(self.own_postings, postings), chance)
        return found


def ground(
    lex: Lexicon, cache: ExpansionCache, text: str, own_share: float, own_postings: int, options: ExpansionOptions
) -> Ground:
    """What the fixed filters read of the span `text` (`own_share`, `own_postings`: `Found`'s)."""
    stop = frozenset(options.noise_words)
    modifiers = frozenset(options.modifiers) | options.pattern_words()
    own_words = frozenset(text.split(" ")) - stop
    return Ground(
        lex,
        options,
        own_words,
        own_words - modifiers,
        spelling_key(text, stop),
        modifiers,
        cache.different_jobs_cosine(options) or 0.0,
        lex.split_half is not None,
        own_share,
        own_postings,
        head_of(text),
        cache.word_speller().correct,
        lambda key: cache.mistyped(key, options.noise_words),
    )
