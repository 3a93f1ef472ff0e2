"""The first pass over a dump: read, validate, de-duplicate and tokenise every posting once.

What it reads goes to a scratch file of sentences, one a line, `M<TAB>tokens`: M is T for a
title, D for other text, and lower case (t, d) when the sentence continues the block (paragraph,
list item) of the line before; an empty `P` line starts each posting. Every later pass streams
from it; memory follows the vocabulary, not the number of postings. Phrase passes work sentence by
sentence; skip-gram sees a block; the duties of a title are counted posting by posting.
"""

from __future__ import annotations

import hashlib
import multiprocessing
from collections import Counter, deque
from collections.abc import Iterator
from dataclasses import dataclass
from multiprocessing.pool import AsyncResult
from pathlib import Path
from typing import IO

from training.corpus import Posting, PostingCorpus
from training.counting import RUN_BYTES, line_runs
from training.progress import Progress
from training.titles import title_cores
from widen.model.phrases import Phraser
from widen.text.forms import key_of_text
from widen.text.tokenize import blocks

__all__ = ["FirstPass", "Scratch"]

#: At most this many protected names (places, employers) are kept from a dump.
MAX_PROTECTED = 200_000


class Scratch:
    """The corpus as phrased so far, in a scratch file of `M<TAB>tokens` lines (see the module).

    `apply(phraser)` writes it with one more phrase pass applied as the next scratch file, so the
    next pass reads it without applying earlier passes again. With `workers` above 1, forked
    processes apply the pass to runs of lines; the runs are written in order, the same file one
    process makes.
    """

    def __init__(self, folder: Path, workers: int = 1) -> None:
        self.folder = folder
        self.workers = workers
        self.generation = 0
        self.path = folder / "sentences.0.txt"

    def _next(self) -> tuple[Path, Path]:
        self.generation += 1
        return self.path, self.folder / f"sentences.{self.generation}.txt"

    def _done(self, source: Path, target: Path) -> None:
        source.unlink()
        self.path = target

    def apply(self, phraser: Phraser) -> Path:
        """One more phrase pass applied and written as the next scratch file, which is returned
        (`training.counting` counts it)."""
        source, target = self._next()
        with target.open("w", encoding="utf-8") as dst:
            if self.workers <= 1:
                dst.write(_phrase_run(source, 0, source.stat().st_size, phraser))
            else:
                for text in _phrased_runs(source, phraser, self.workers):
                    dst.write(text)
        self._done(source, target)
        return target


#: The bytes of scratch corpus one worker phrases at a time.
_RUN_BYTES = RUN_BYTES
_phraser: Phraser | None = None  # the pass a worker applies, set once when the pool starts


def _set_phraser(phraser: Phraser) -> None:
    global _phraser
    _phraser = phraser


def _phrase_run(source: Path, start: int, stop: int, phraser: Phraser | None = None) -> str:
    """Runs in a worker: the lines of `source` in [start, stop) with the pass applied (the worker's own,
    or `phraser`), as they are written."""
    phraser = phraser or _phraser
    assert phraser is not None
    with source.open("rb") as fh:
        fh.seek(start)
        text = fh.read(stop - start).decode("utf-8")
    return "".join(f"{line[:2]}{' '.join(phraser(line[2:].split()))}\n" for line in _lines_of(text))


def _lines_of(text: str) -> list[str]:
    """The lines of a run of whole lines, each without its line break."""
    return text.split("\n")[:-1]


def _phrased_runs(source: Path, phraser: Phraser, workers: int) -> Iterator[str]:
    """The runs of `source` phrased by `workers` forked processes, in order, a bounded number ahead."""
    with multiprocessing.get_context("fork").Pool(workers, initializer=_set_phraser, initargs=(phraser,)) as pool:
        pending: deque[AsyncResult[str]] = deque()
        for start, stop in line_runs(source, _RUN_BYTES):
            pending.append(pool.apply_async(_phrase_run, (source, start, stop)))
            if len(pending) >= 2 * workers:
                yield pending.popleft().get()
        while pending:
            yield pending.popleft().get()


@dataclass(frozen=True)
class _Tokenised:
    """One posting after tokenising: scratch lines ready to write, and what de-duplication needs."""

    line: int
    key: bytes
    tokens: int
    lines: str
    protected: tuple[tuple[str, str, str], ...]  # (key, field, value as written)
    cores: tuple[str, ...]  # title cores of two words or more, for phrase entries
    names: tuple[str, ...]  # the titles the posting names, one word or more, for the title table


@dataclass(frozen=True)
class _TitleRule:
    """What a title core leaves out, sent to the workers."""

    drop: frozenset[str]
    longest: int
    longest_name: int


def _tokenise_batch(batch: list[Posting], has_title: bool, rule: _TitleRule) -> list[_Tokenised]:
    """Runs in a worker process; returns plain strings, which cross processes cheaply."""
    out = []
    for posting in batch:
        rows: list[str] = ["P\t\n"]
        flat: list[str] = []
        for number, text in enumerate(posting.texts):
            mark = "T" if number == 0 and has_title else "D"
            for block in blocks(text):
                for position, sent in enumerate(block):
                    rows.append(f"{mark if position == 0 else mark.lower()}\t{' '.join(sent)}\n")
                    flat.extend(sent)
        key = hashlib.blake2b("\x1f".join(flat).encode("utf-8"), digest_size=12).digest()
        protected = tuple((k, f, v) for f, v in posting.protected if (k := key_of_text(v)))
        cores: tuple[str, ...] = ()
        names: tuple[str, ...] = ()
        if has_title and posting.texts:
            own = [v for _, v in posting.protected]
            cores = tuple(title_cores(posting.texts[0], rule.drop, own, rule.longest))
            names = tuple(dict.fromkeys(title_cores(posting.texts[0], rule.drop, own, rule.longest_name, 1)))
        out.append(_Tokenised(posting.line, key, len(flat), "".join(rows), protected, cores, names))
    return out


def _batched(corpus: PostingCorpus, size: int = 256) -> Iterator[list[Posting]]:
    batch: list[Posting] = []
    for posting in corpus:
        batch.append(posting)
        if len(batch) == size:
            yield batch
            batch = []
    if batch:
        yield batch


class FirstPass:
    """Read, validate, de-duplicate and tokenise every posting once.

    `write()` reads the dump into the scratch file. Tokenising runs in `workers` processes while
    this one reads, drops duplicates and writes.
    """

    def __init__(
        self,
        corpus: PostingCorpus,
        scratch: Path,
        workers: int,
        out: IO[str],
        drop: frozenset[str],
        longest: int,
        longest_name: int = 8,
    ) -> None:
        self.corpus, self.scratch, self.workers, self.out = corpus, scratch, workers, out
        self.used = self.duplicates = self.tokens = 0
        #: Every protected name: its key, with the field it came from and how the dump writes it.
        self.protected: dict[str, tuple[str, str]] = {}
        #: How many postings name each title core.
        self.cores: Counter[str] = Counter()
        self.has_title = bool(corpus.config.fields) and corpus.config.fields[0] == "title"
        self.rule = _TitleRule(drop, longest, longest_name)
        #: One line a posting written to the scratch corpus, in the same order: the titles it names.
        self.names_path = scratch.with_name("names.txt")

    def _tokenised(self) -> Iterator[_Tokenised]:
        if self.workers <= 1:
            for batch in _batched(self.corpus):
                yield from _tokenise_batch(batch, self.has_title, self.rule)
            return
        # Submit a bounded number of batches ahead (Pool.imap would read the whole dump ahead
        # of a slow consumer and hold it in memory).
        ahead = 2 * self.workers
        with multiprocessing.get_context("fork").Pool(self.workers) as pool:
            pending: deque[AsyncResult[list[_Tokenised]]] = deque()
            for batch in _batched(self.corpus):
                pending.append(pool.apply_async(_tokenise_batch, (batch, self.has_title, self.rule)))
                if len(pending) >= ahead:
                    yield from pending.popleft().get()
            while pending:
                yield from pending.popleft().get()

    def write(self) -> Path:
        """Read the whole dump into the scratch file, which is returned (`training.counting` counts it)."""
        for _ in self._written():
            pass
        return self.scratch

    def _written(self) -> Iterator[_Tokenised]:
        """Every posting kept, once it is written to the scratch file and its names and cores noted."""
        seen: set[bytes] = set()
        with (
            Progress("read and tokenise", unit="postings", stream=self.out) as bar,
            self.scratch.open("w", encoding="utf-8") as fh,
            self.names_path.open("w", encoding="utf-8") as names,
        ):
            for done in self._tokenised():
                bar.update()
                if not done.tokens:
                    self.corpus.stats.skip("empty_text", done.line)
                    continue
                if done.key in seen:
                    self.duplicates += 1
                    continue
                seen.add(done.key)
                self.used += 1
                self.tokens += done.tokens
                fh.write(done.lines)
                names.write(" ".join(done.names) + "\n")
                for key, field, value in done.protected:
                    if key not in self.protected and len(self.protected) < MAX_PROTECTED:
                        self.protected[key] = (field, value)
                self.cores.update(set(done.cores))
                yield done
