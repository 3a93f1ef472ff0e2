"""What the postings naming each title say, summed into sparse count matrices, and counts into profiles.

`gather` reads the scratch file of postings: each posting naming a title becomes a bag, the
description's entries with how often each is said (the title's own words left out, see
`training.duties`). The bags are summed per title a chunk of postings at a time, as one sparse
product (titles x postings of the chunk, times postings x entries), so the sums are made in
compiled code, not entry by entry; counts are integers, so the sums are exact in any order, and
the file is read in parts by `corpus.workers` processes. A reservoir sample of each title's bags
is kept too, as two small arrays each (entries and counts), for the size calibration; which
postings it keeps depends only on the titles each posting names, so it is drawn first, in the
postings' order, in one quick read of the last column.

`profiles` weighs a title x entries count matrix into unit-length TF-IDF rows.
"""

from __future__ import annotations

import functools
import itertools
import math
import multiprocessing
import random
from collections import Counter
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import sparse

from widen.text.forms import PHRASE_JOINER

__all__ = ["Bag", "Gathered", "gather", "lines", "profiles", "summed", "words"]

#: A posting's bag: the entries' columns and how often each is said.
Bag = tuple[npt.NDArray[np.int32], npt.NDArray[np.int32]]

#: Postings whose bags are summed into the title sums at once.
CHUNK = 10_000


def words(entries: str) -> list[str]:
    return entries.split() if entries else []


def lines(postings: Path) -> Iterator[tuple[str, str, str]]:
    with postings.open(encoding="utf-8") as fh:
        for line in fh:
            head, _, rest = line.rstrip("\n").partition("\t")
            body, _, names = rest.partition("\t")
            yield head, body, names


def profiles(counts: sparse.csr_matrix, idf: npt.NDArray[np.float64]) -> sparse.csr_matrix:
    """Rows of log(1 + count) x idf, at unit length, from a count matrix (every stored count at least 1)."""
    counts = sparse.csr_matrix(counts, dtype=np.int64)
    counts.sum_duplicates()  # sorted columns a row, one slot an entry
    seen, at = np.unique(counts.data, return_inverse=True)
    # math.log1p a distinct count, not numpy's: the same floats the entry-by-entry weighting gave.
    weight = np.array([math.log1p(int(n)) for n in seen], dtype=np.float64)[at] * idf[counts.indices]
    matrix = sparse.csr_matrix((weight, counts.indices, counts.indptr), shape=counts.shape)
    norms = np.sqrt(np.asarray(matrix.multiply(matrix).sum(axis=1)).ravel())
    norms[norms == 0] = 1.0
    return sparse.csr_matrix(sparse.diags(1.0 / norms) @ matrix)


def summed(bags: list[list[Bag]], width: int) -> sparse.csr_matrix:
    """One row a list of bags: their counts added up (rows x width)."""
    rows = [np.full(len(c), r, dtype=np.int64) for r, group in enumerate(bags) for c, _ in group]
    cols = [c for group in bags for c, _ in group]
    vals = [n for group in bags for _, n in group]
    if not cols:
        return sparse.csr_matrix((len(bags), width), dtype=np.int64)
    coo = sparse.coo_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(len(bags), width)
    )
    return sparse.csr_matrix(coo, dtype=np.int64)  # duplicates summed


@dataclass
class Gathered:
    """Each title's counts from all its postings and from the even- and odd-numbered ones (titles x
    entries), and a reservoir sample of its postings' bags."""

    whole: sparse.csr_matrix
    halves: tuple[sparse.csr_matrix, sparse.csr_matrix]
    kept: list[list[Bag]]


class _Sums:
    """The title x entry sums for the even- and odd-numbered postings, a chunk of postings at a time."""

    def __init__(self, titles: int, width: int) -> None:
        self.shape = (titles, width)
        self.sums = [sparse.csr_matrix(self.shape, dtype=np.int64) for _ in range(2)]
        self.clear()

    def clear(self) -> None:
        self.cols: list[int] = []
        self.counts: list[int] = []
        self.ends: list[int] = [0]
        self.titles: list[list[int]] = [[], []]  # per half: (title) a posting names
        self.postings: list[list[int]] = [[], []]  # per half: the posting (in this chunk) naming it

    def add(self, said: Counter[int], mine: list[int], half: int) -> int:
        """A posting's bag and the titles it names; returns its place in the chunk."""
        self.cols.extend(said)
        self.counts.extend(said.values())
        self.ends.append(len(self.cols))
        place = len(self.ends) - 2
        self.titles[half].extend(mine)
        self.postings[half].extend([place] * len(mine))
        return place

    def flush(self) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.int64], npt.NDArray[np.int64]]:
        """Add the chunk to the sums; returns its bags as arrays (columns, counts, where each posting ends)."""
        cols = np.array(self.cols, dtype=np.int32)
        counts = np.array(self.counts, dtype=np.int64)
        ends = np.array(self.ends, dtype=np.int64)
        bags = sparse.csr_matrix((counts, cols, ends), shape=(len(ends) - 1, self.shape[1]))
        for half in (0, 1):
            titles = np.array(self.titles[half], dtype=np.int64)
            of = np.array(self.postings[half], dtype=np.int64)
            naming = sparse.csr_matrix(
                (np.ones(len(titles), dtype=np.int64), (titles, of)), shape=(self.shape[0], len(ends) - 1)
            )
            self.sums[half] = self.sums[half] + naming @ bags
        self.clear()
        return cols, counts, ends

    def done(self) -> tuple[sparse.csr_matrix, sparse.csr_matrix]:
        for half in (0, 1):
            self.sums[half].sum_duplicates()
        return self.sums[0], self.sums[1]


@dataclass
class _Plan:
    """What the reading needs before it starts: which posting each slot of each title's reservoir ends
    with, and where the file is cut into parts (byte offset, number of the posting there)."""

    holders: list[list[int]]
    cuts: list[tuple[int, int]]


def _plan(postings: Path, row_of: Mapping[str, int], seed: int, keep: int, parts: int) -> _Plan:
    """Draw every title's reservoir sample from the titles each posting names alone (the draw needs
    nothing else), in the postings' order, as reading them one after another would."""
    holders: list[list[int]] = [[] for _ in range(len(row_of))]
    seen = [0] * len(row_of)
    rng = random.Random(seed)
    size = postings.stat().st_size
    cuts, offset, number = [(0, 0)], 0, 0
    with postings.open("rb") as fh:
        for number, raw in enumerate(fh):
            if offset * parts >= size * len(cuts) and len(cuts) < parts:
                cuts.append((offset, number))
            offset += len(raw)
            fields = raw.rstrip(b"\n").split(b"\t", 2)  # as `lines` cuts them
            names = fields[2].decode("utf-8").split() if len(fields) == 3 else []
            # In the order the posting names them (a set's order would change with Python's hash seed).
            for r in [row_of[t] for t in dict.fromkeys(names) if t in row_of]:
                seen[r] += 1
                if len(holders[r]) < keep:
                    holders[r].append(number)
                elif (j := rng.randrange(seen[r])) < keep:
                    holders[r][j] = number
    cuts.append((offset, number + 1))
    return _Plan(holders, cuts)


# What a forked worker reads its part with (set before the fork, so nothing large is pickled).
_reading: tuple[Path, Mapping[str, int], Mapping[str, int], frozenset[int]] | None = None


class _KeptBags:
    """The bags a part's reservoirs keep, in four arrays (few objects to hand back from a worker):
    posting numbers, where each bag ends, and all the bags' columns and counts one after another."""

    def __init__(self) -> None:
        self.numbers: list[int] = []
        self.ends: list[int] = [0]
        self.cols: list[npt.NDArray[np.int32]] = []
        self.counts: list[npt.NDArray[np.int32]] = []

    def settle(
        self, pending: dict[int, int], chunk: tuple[npt.NDArray[np.int32], npt.NDArray[np.int64], npt.NDArray[np.int64]]
    ) -> None:
        """Take the chunk's kept bags (posting number -> place in the chunk) out of its arrays."""
        cols, counts, ends = chunk
        for number, place in pending.items():
            a, b = int(ends[place]), int(ends[place + 1])
            self.numbers.append(number)
            self.ends.append(self.ends[-1] + b - a)
            self.cols.append(cols[a:b].copy())  # a view would keep the whole chunk alive
            self.counts.append(counts[a:b].astype(np.int32))
        pending.clear()

    def packed(
        self,
    ) -> tuple[npt.NDArray[np.int64], npt.NDArray[np.int64], npt.NDArray[np.int32], npt.NDArray[np.int32]]:
        none = np.zeros(0, dtype=np.int32)
        return (
            np.array(self.numbers, dtype=np.int64),
            np.array(self.ends, dtype=np.int64),
            np.concatenate([none, *self.cols]),
            np.concatenate([none, *self.counts]),
        )


def _read_part(
    start: int, stop: int, number: int
) -> tuple[tuple[sparse.csr_matrix, sparse.csr_matrix], tuple[npt.NDArray[Any], ...]]:
    """The title sums of the postings between two byte offsets (`number`: the first one's), and the bags
    of those any reservoir keeps, packed (runs in a worker, too)."""
    assert _reading is not None
    postings, row_of, vocabulary, wanted = _reading
    sums = _Sums(len(row_of), len(vocabulary))
    kept = _KeptBags()
    pending: dict[int, int] = {}  # posting number -> its place in the chunk
    words_of = functools.cache(lambda entry: entry.split(PHRASE_JOINER))
    with postings.open("rb") as fh:
        fh.seek(start)
        while fh.tell() < stop:
            head, _, rest = fh.readline().decode("utf-8").rstrip("\n").partition("\t")
            body, _, names = rest.partition("\t")
            mine = [row_of[t] for t in dict.fromkeys(words(names)) if t in row_of]
            if mine:
                own = {w for t in words(head) + words(names) for w in t.split(PHRASE_JOINER)}
                said: Counter[int] = Counter()
                for e, n in Counter(words(body)).items():  # counted once each, in the order first said
                    if e in vocabulary and own.isdisjoint(words_of(e)):
                        said[vocabulary[e]] = n
                place = sums.add(said, mine, number % 2)
                if number in wanted:
                    pending[number] = place
                if len(sums.ends) > CHUNK:
                    kept.settle(pending, sums.flush())
            number += 1
    kept.settle(pending, sums.flush())
    return sums.done(), kept.packed()


def gather(
    postings: Path, row_of: Mapping[str, int], vocabulary: Mapping[str, int], seed: int, keep: int, workers: int = 1
) -> Gathered:
    """Read the postings (see the module); `keep` bags a title in its reservoir. The reservoirs are drawn
    first, from the titles each posting names; then `workers` processes (this one and forked ones) each
    read a part of the file, and their sums are added up (exact: integers)."""
    global _reading
    plan = _plan(postings, row_of, seed, keep, max(workers, 1))
    wanted = frozenset(n for slots in plan.holders for n in slots)
    parts = [(a, b, n) for (a, n), (b, _) in itertools.pairwise(plan.cuts) if b > a]
    _reading = (postings, row_of, vocabulary, wanted)
    try:
        if len(parts) > 1:
            with multiprocessing.get_context("fork").Pool(len(parts) - 1) as pool:
                pending = [pool.apply_async(_read_part, part) for part in parts[1:]]
                done = [_read_part(*parts[0])] + [p.get() for p in pending]
        else:
            done = [_read_part(*part) for part in parts]
    finally:
        _reading = None
    empty = sparse.csr_matrix((len(row_of), len(vocabulary)), dtype=np.int64)
    halves = [empty, empty]
    bags: dict[int, Bag] = {}
    for (even, odd), (numbers, ends, cols, counts) in done:
        halves = [halves[0] + even, halves[1] + odd]
        for n, a, b in zip(numbers.tolist(), ends[:-1].tolist(), ends[1:].tolist(), strict=True):
            bags[n] = (cols[a:b], counts[a:b])  # views of the part's arrays, which all stay kept
    for half in halves:
        half.sum_duplicates()
    whole = halves[0] + halves[1]
    whole.sum_duplicates()
    kept = [[bags[n] for n in slots] for slots in plan.holders]
    return Gathered(whole, (halves[0], halves[1]), kept)
