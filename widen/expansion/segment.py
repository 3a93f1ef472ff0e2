"""Splitting a seeker's query into segments the way the corpus was phrased, and saying what each is.

The query goes through the one tokeniser; a word the bundle has never seen (not in its vocabulary,
not a place or employer name, not a word widen knows the role of) gets a spelling correction from
the vocabulary, when one is close enough. The corrected words go through the bundle's phrase
passes (a modifier glued to the first word of a title is split off again), then neighbouring
entries are joined by greedy longest match (up to `max_words` words) against the vocabulary, the
protected names and the shift patterns. Text in double quotes is kept as one segment. Each segment has a kind:

- `phrase`, `term`: a job (an entry of the vocabulary), which the query always requires;
- `unknown`: not in the vocabulary (composed from its words when they are, and quoted);
- `noise`: words that name no job ("jobs", "near", "in"), dropped from the query;
- `place`, `employer`, `protected`: a name from the dump's fields (`field` says which);
- `pattern`: a shift pattern or contract ("nights", "p/t"), which matches its own spellings only;
- `modifier`: words that qualify a job without changing it ("senior", "relief").
"""

from __future__ import annotations

import re
from collections.abc import Callable, Collection, Mapping, Sequence
from dataclasses import dataclass, field
from itertools import pairwise
from typing import NamedTuple

from widen.text.forms import PHRASE_JOINER, words_in
from widen.text.tokenize import is_number, tokens

__all__ = ["Span", "Vocabulary", "segment_query"]

_QUOTED = re.compile(r'"([^"]*)"')


class Span(NamedTuple):
    """A run of the query's words as segmentation read it (the result shows it as a `Segment`): its
    vocabulary key (words joined by the phrase joiner), its kind, and the words as the seeker typed
    them when a spelling correction changed them (`typed`).

    `parts` are the known entries a composed vector is built from (empty unless composed); `field`,
    the dump's field of a protected name; `pattern`, the name of a shift pattern. A named tuple,
    not a dataclass: several are made for every query, and a tuple is the cheapest to make.
    """

    key: str
    kind: str
    parts: tuple[str, ...] = ()
    typed: str = ""
    field: str | None = None
    pattern: str | None = None


@dataclass(frozen=True)
class Vocabulary:
    """What segmentation needs of a bundle and the options, built once per bundle and options."""

    entries: Collection[str]
    names: Mapping[str, str]  # protected key -> its field
    noise: frozenset[str]
    modifiers: frozenset[str]
    spellings: Mapping[str, str]  # pattern spelling key -> pattern name
    correct: Callable[[str], str | None]
    # Join a run of job words that is no known entry or title into one span the seeker means as one
    # title ("precision device inspector"), searched by its words (composed), at most this many words.
    compose_runs: int = 0
    # Words the dump's titles use: real words, however seldom, never corrected.
    title_words: frozenset[str] = frozenset()
    # What segmentation worked out before, per word and per entry: each word as read (itself or its
    # correction) and each key's span as typed (the same every time: worked out once each).
    read_words: dict[str, str] = field(default_factory=dict, compare=False, repr=False)
    key_spans: dict[str, Span] = field(default_factory=dict, compare=False, repr=False)

    def known(self, key: str) -> bool:
        return key in self.entries or key in self.names or key in self.spellings

    def word_is_known(self, word: str) -> bool:
        return (
            word in self.entries
            or word in self.names
            or word in self.noise
            or word in self.modifiers
            or word in self.spellings
            or word in self.title_words
            or is_number(word)
        )


def _greedy(entries: Sequence[str], known: Callable[[str], bool], max_words: int) -> list[str]:
    out: list[str] = []
    counts = [words_in(entry) for entry in entries]
    i = 0
    while i < len(entries):
        best = i + 1
        words = counts[i]
        for j in range(i + 2, len(entries) + 1):
            words += counts[j - 1]
            if words > max_words:
                break
            if known(PHRASE_JOINER.join(entries[i:j])):
                best = j
        out.append(PHRASE_JOINER.join(entries[i:best]))
        i = best
    return out


def _unglue(entries: list[str], vocab: Vocabulary) -> list[str]:
    """A mined phrase that glued a modifier to the first word of a title ("trainee_dental" + "nurse")
    is split back when the rest and the next entry are a known entry ("trainee" + "dental_nurse")
    and the whole is not."""
    out = list(entries)
    i = 0
    while i < len(out) - 1:
        words = out[i].split(PHRASE_JOINER)
        lead = 0
        while lead < len(words) - 1 and words[lead] in vocab.modifiers:
            lead += 1
        if lead:
            rest = PHRASE_JOINER.join([*words[lead:], out[i + 1]])
            whole = PHRASE_JOINER.join([out[i], out[i + 1]])
            if vocab.known(rest) and not vocab.known(whole):
                out[i : i + 2] = [*words[:lead], rest]
                i += lead
        i += 1
    return out


def _classify(key: str, vocab: Vocabulary, parts: Sequence[str], typed: str) -> Span:
    words = key.split(PHRASE_JOINER)
    if key in vocab.spellings:
        return Span(key, "pattern", typed=typed, pattern=vocab.spellings[key])
    if all(w in vocab.noise for w in words):
        return Span(key, "noise", typed=typed)
    if key in vocab.names:
        field = vocab.names[key]
        kind = {"location": "place", "employer": "employer"}.get(field, "protected")
        return Span(key, kind, typed=typed, field=field)
    if all(w in vocab.modifiers for w in words):
        return Span(key, "modifier", typed=typed)
    if key in vocab.entries:
        return Span(key, "phrase" if PHRASE_JOINER in key else "term", typed=typed)
    if len(parts) > 1 and all(p in vocab.entries for p in parts):
        return Span(key, "unknown", tuple(parts), typed=typed)
    return Span(key, "unknown", typed=typed)


#: How many words and keys a vocabulary keeps what it worked out for (far more than a day's queries use).
_KEPT = 200_000


def _corrected(toks: list[str], vocab: Vocabulary) -> list[str]:
    """The tokens with every unknown word replaced by its spelling correction, where there is one."""
    out = []
    read = vocab.read_words
    for tok in toks:
        fixed = read.get(tok)
        if fixed is None:
            fixed = (None if vocab.word_is_known(tok) else vocab.correct(tok)) or tok
            if len(read) < _KEPT:
                read[tok] = fixed
        out.append(fixed)
    return out


def _classified(key: str, vocab: Vocabulary, written: str) -> Span:
    """`_classify` of a key read from its own words; as typed, the span is kept per key."""
    if written:
        return _classify(key, vocab, key.split(PHRASE_JOINER), written)
    span = vocab.key_spans.get(key)
    if span is None:
        span = _classify(key, vocab, key.split(PHRASE_JOINER), "")
        if len(vocab.key_spans) < _KEPT:
            vocab.key_spans[key] = span
    return span


def _typed_words(original: list[str], keys: list[str]) -> list[str]:
    """The typed words behind each segment key (a correction keeps the number of words)."""
    typed, i = [], 0
    for key in keys:
        n = words_in(key)
        typed.append(" ".join(original[i : i + n]))
        i += n
    return typed


def _runs_joined(spans: list[Span], vocab: Vocabulary) -> list[Span]:
    """Each run of two or more job spans (entries, not names, patterns or modifiers) that together are
    no known entry or title, as one composed span of their parts."""
    jobs = [span.kind in ("phrase", "term") for span in spans]
    if not any(a and b for a, b in pairwise(jobs)):  # most queries: no two job spans side by side
        return spans
    out: list[Span] = []
    run: list[Span] = []

    def close() -> None:
        words = sum(words_in(s.key) for s in run)
        if len(run) >= 2 and words <= vocab.compose_runs:
            key = PHRASE_JOINER.join(s.key for s in run)
            if not vocab.known(key):
                typed = " ".join(s.typed or s.key.replace(PHRASE_JOINER, " ") for s in run)
                written = typed if any(s.typed for s in run) else ""
                out.append(Span(key, "unknown", tuple(s.key for s in run), written))
                return
        out.extend(run)

    for span in spans:
        if span.kind in ("phrase", "term"):
            run.append(span)
            continue
        close()
        run = []
        out.append(span)
    close()
    return out


def segment_query(
    query: str,
    phraser: Callable[[list[str]], list[str]],
    vocab: Vocabulary,
    max_words: int,
    max_tokens: int,
) -> list[Span]:
    """Segments of a query, in order; at most `max_tokens` tokens are looked at."""
    spans: list[Span] = []
    budget = max_tokens
    position = 0
    chunks: list[tuple[str, bool]] = []
    for match in _QUOTED.finditer(query) if '"' in query else ():
        chunks.append((query[position : match.start()], False))
        chunks.append((match.group(1), True))
        position = match.end()
    chunks.append((query[position:], False))

    for text, quoted in chunks:
        toks = tokens(text)[:budget]
        budget -= len(toks)
        if not toks:
            continue
        fixed = _corrected(toks, vocab)
        if quoted:
            key = PHRASE_JOINER.join(fixed)
            typed = " ".join(toks) if fixed != toks else ""
            spans.append(_classify(key, vocab, _greedy(phraser(list(fixed)), vocab.known, max_words), typed))
            continue
        keys = _greedy(_unglue(phraser(list(fixed)), vocab), vocab.known, max_words)
        found = []
        for key, typed in zip(keys, _typed_words(toks, keys), strict=True):
            written = typed if typed != key.replace(PHRASE_JOINER, " ") else ""
            found.append(_classified(key, vocab, written))
        spans.extend(_runs_joined(found, vocab) if vocab.compose_runs else found)
        if budget <= 0:
            break
    return spans
