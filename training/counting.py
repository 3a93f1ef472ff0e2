"""The counts the phrase passes and the skip-gram vocabulary start from, made in parts, as gensim makes them.

gensim's Phrases counts every word and every pair of neighbouring words (a pair bridged by connector
words carries them: "head_of_care") in a Python loop, sentence by sentence, on one core; Word2Vec in
corpus-file mode reads its whole file once more, on one core, to count the words before it trains.
Counts are sums: made in runs of whole lines, in worker processes, and added up, they are the same
numbers. Adding the runs in file order also keeps the one order that matters, the order in which words
are first met (Word2Vec breaks ties of count by it). gensim's own counting is the reference
(`tests/test_counting.py`, on real text).
"""

from __future__ import annotations

import math
import multiprocessing
from collections import Counter, deque
from collections.abc import Callable, Iterator
from itertools import compress, filterfalse, pairwise
from multiprocessing.pool import AsyncResult
from pathlib import Path
from typing import NamedTuple

from gensim.models.word2vec import MAX_WORDS_IN_BATCH

__all__ = ["Counted", "pass_counts", "word_counts", "count_file", "line_runs"]

#: Marks a line start while a run of scratch lines is counted as one list of tokens; a run holding it
#: anywhere else is counted line by line instead.
_MARK = "\x02"

#: The bytes of a file one worker counts (or phrases) at a time.
RUN_BYTES = 1 << 23


class Counted(NamedTuple):
    """Counts of entries, the words read (every token, connector words too), and the sentences gensim's
    LineSentence makes of them (skip-gram's count; 0 where unused)."""

    vocab: Counter[str]
    words: int
    sentences: int = 0


#: The characters counted as one list of tokens: small enough that the lists stay in the processor's
#: caches (a run counted whole was 2.5x slower).
_PIECE = 1 << 18


def pass_counts(text: str, bridges: frozenset[str], joiner: str) -> Counted:
    """What gensim's `Phrases` counts in these scratch lines (`M<TAB>entries` each, `training.first_pass`):
    every entry that is not a bridge word, and every two such entries in turn within a line, joined
    with the bridge words between them."""
    if _MARK in text or text.count("\t") != text.count("\n"):
        return _pass_counts_by_line(text, bridges, joiner)
    vocab: Counter[str] = Counter()
    words = 0
    for piece in _pieces(text):
        words += _count_piece(piece, bridges, joiner, vocab)
    for key in [key for key in vocab if _MARK in key]:
        del vocab[key]
    return Counted(vocab, words)


def _pieces(text: str) -> Iterator[str]:
    """`text` (whole lines) in pieces of whole lines of about `_PIECE` characters."""
    start = 0
    while start < len(text):
        stop = text.find("\n", start + _PIECE) + 1 or len(text)
        yield text[start:stop]
        start = stop


def _count_piece(text: str, bridges: frozenset[str], joiner: str, vocab: Counter[str]) -> int:
    """`pass_counts` of one piece, added to `vocab`, all at once: the lines become one list of tokens, each
    line's mark a token of its own (so no pair crosses a line unmarked; the caller drops every count
    holding a mark). Returns the words read."""
    tokens = text.replace("\t", _MARK + " ").split()
    is_bridge = bridges.__contains__
    at = list(compress(range(len(tokens)), map(is_bridge, tokens)))
    kept = list(filterfalse(is_bridge, tokens))
    join = joiner.join
    pairs = list(map(join, pairwise(kept)))
    k, bridged = 0, len(at)
    while k < bridged:  # each run of bridge words: the pair around it carries it
        first = last = at[k]
        k += 1
        while k < bridged and at[k] == last + 1:
            last, k = last + 1, k + 1
        after = last + 1 - k  # the entry after the run, as an index of `kept`
        if after >= 1 and last + 1 < len(tokens):
            pairs[after - 1] = join([kept[after - 1], *tokens[first : last + 1], kept[after]])
    vocab.update(kept)
    vocab.update(pairs)
    return len(tokens) - text.count("\n")


def _pass_counts_by_line(text: str, bridges: frozenset[str], joiner: str) -> Counted:
    """`pass_counts` one line at a time, as gensim's loop counts (for a run `pass_counts` cannot mark)."""
    vocab: Counter[str] = Counter()
    words = 0
    for line in text.split("\n")[:-1]:
        sentence = line[2:].split()
        start: str | None = None
        between: list[str] = []
        for word in sentence:
            if word not in bridges:
                vocab[word] += 1
                if start is not None:
                    vocab[joiner.join([start, *between, word])] += 1
                start, between = word, []
            elif start is not None:
                between.append(word)
        words += len(sentence)
    return Counted(vocab, words)


def word_counts(text: str) -> Counted:
    """What Word2Vec's vocabulary scan counts in these lines of a corpus file: every word, in the order
    first met, and gensim's LineSentence sentences (a line's words, at most `MAX_WORDS_IN_BATCH` a
    sentence; a blank line none)."""
    vocab: Counter[str] = Counter()
    for piece in _pieces(text):
        vocab.update(piece.split())
    lines = text.split("\n")
    if lines[-1] == "":
        lines.pop()
    blank = lines.count("") + sum(map(str.isspace, lines))
    sentences = len(lines) - blank
    # Only a line of twice the limit's characters can hold more than the limit's words.
    for line in compress(lines, map((2 * MAX_WORDS_IN_BATCH - 1).__le__, map(len, lines))):
        words = len(line.split())
        sentences += math.ceil(words / MAX_WORDS_IN_BATCH) - (1 if words else 0)
    return Counted(vocab, sum(vocab.values()), sentences)


def line_runs(source: Path, size: int = RUN_BYTES) -> Iterator[tuple[int, int]]:
    """`source` cut at line starts into runs of about `size` bytes."""
    total = source.stat().st_size
    with source.open("rb") as fh:
        start = 0
        while start < total:
            fh.seek(min(start + size, total))
            fh.readline()
            stop = min(fh.tell(), total)
            yield start, stop
            start = stop


def _count_run(source: Path, start: int, stop: int, count: Callable[[str], Counted]) -> Counted:
    with source.open("rb") as fh:
        fh.seek(start)
        return count(fh.read(stop - start).decode("utf-8"))


def count_file(source: Path, count: Callable[[str], Counted], workers: int = 1) -> Counted:
    """`count` over the runs of whole lines of `source`, in `workers` forked processes (a bounded number of
    runs ahead), added in file order: the counts one pass over the whole file makes, first met first."""
    total: Counter[str] = Counter()
    words = sentences = 0
    for part in _counted_runs(source, count, workers):
        total.update(part.vocab)
        words, sentences = words + part.words, sentences + part.sentences
    return Counted(total, words, sentences)


def _counted_runs(source: Path, count: Callable[[str], Counted], workers: int) -> Iterator[Counted]:
    if workers <= 1:
        for start, stop in line_runs(source, RUN_BYTES):
            yield _count_run(source, start, stop, count)
        return
    with multiprocessing.get_context("fork").Pool(workers) as pool:
        pending: deque[AsyncResult[Counted]] = deque()
        for start, stop in line_runs(source, RUN_BYTES):
            pending.append(pool.apply_async(_count_run, (source, start, stop, count)))
            if len(pending) >= 2 * workers:
                yield pending.popleft().get()
        while pending:
            yield pending.popleft().get()
