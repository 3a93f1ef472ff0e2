"""What the postings naming each title say, summed into sparse count matrices, and counts into profiles.

`gather` reads the scratch file of postings once. Each posting naming a title becomes a bag: the
description's entries with how often each is said (the title's own words left out, see
`training.duties`). The bags are summed per title a chunk of postings at a time, as one sparse
product (titles x postings of the chunk, times postings x entries), so the sums are made in
compiled code, not entry by entry; counts are integers, so the sums are exact in any order. A
reservoir sample of each title's bags is kept too, as two small arrays each (entries and counts),
for the size calibration.

`profiles` weighs a title x entries count matrix into unit-length TF-IDF rows.
"""

from __future__ import annotations

import functools
import math
import random
from collections import Counter
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt
from scipy import sparse

from widen.text.forms import PHRASE_JOINER

__all__ = ["Bag", "Gathered", "gather", "lines", "profiles", "summed", "words"]

#: A posting's bag: the entries' columns and how often each is said.
Bag = tuple[npt.NDArray[np.int32], npt.NDArray[np.int64]]

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


def gather(postings: Path, row_of: Mapping[str, int], vocabulary: Mapping[str, int], seed: int, keep: int) -> Gathered:
    """Read the postings once (see the module); `keep` bags a title in its reservoir."""
    sums = _Sums(len(row_of), len(vocabulary))
    kept: list[list[Bag | int]] = [[] for _ in range(len(row_of))]
    waiting: list[tuple[int, int]] = []  # (title, slot) holding a posting of the chunk not yet in arrays
    seen = [0] * len(row_of)
    rng = random.Random(seed)
    words_of = functools.cache(lambda entry: entry.split(PHRASE_JOINER))
    for number, (head, body, names) in enumerate(lines(postings)):
        # In the order the posting names them (a set's order would change with Python's hash seed, and
        # with it which postings the reservoir keeps).
        mine = [row_of[t] for t in dict.fromkeys(words(names)) if t in row_of]
        if not mine:
            continue
        own = {w for t in words(head) + words(names) for w in t.split(PHRASE_JOINER)}
        said: Counter[int] = Counter()
        for e, n in Counter(words(body)).items():  # counted once each, in the order first said
            if e in vocabulary and own.isdisjoint(words_of(e)):
                said[vocabulary[e]] = n
        place = sums.add(said, mine, number % 2)
        for r in mine:
            seen[r] += 1
            if len(kept[r]) < keep:  # a reservoir sample of the title's postings
                kept[r].append(place)
                waiting.append((r, len(kept[r]) - 1))
            elif (j := rng.randrange(seen[r])) < keep:
                kept[r][j] = place
                waiting.append((r, j))
        if len(sums.ends) > CHUNK:
            _settle(kept, waiting, sums.flush())
    _settle(kept, waiting, sums.flush())
    halves = sums.done()
    whole = halves[0] + halves[1]
    whole.sum_duplicates()
    return Gathered(whole, halves, kept)  # type: ignore[arg-type]  # every slot settled to a bag


def _settle(
    kept: list[list[Bag | int]],
    waiting: list[tuple[int, int]],
    chunk: tuple[npt.NDArray[np.int32], npt.NDArray[np.int64], npt.NDArray[np.int64]],
) -> None:
    """Replace the chunk's places still held in the reservoirs by the bags' own arrays (copies: a view
    would keep the whole chunk alive)."""
    cols, counts, ends = chunk
    made: dict[int, Bag] = {}
    for r, slot in waiting:
        place = kept[r][slot]
        if isinstance(place, int):
            if place not in made:
                a, b = int(ends[place]), int(ends[place + 1])
                made[place] = (cols[a:b].copy(), counts[a:b].copy())
            kept[r][slot] = made[place]
    waiting.clear()
