"""The duties a title comes with, which titles come with the same duties, and how sure that can be.

Two names for one job are posted with the same duties, whatever words surround the names; a close
but different job shares some of them; another job, none. Every title the dump's postings name
(`training.titles.title_cores`, one word or more) that at least `min_postings` postings name gets a
profile: what the descriptions of those postings say, their entries (the title's own words left out,
so "care assistant" and "teaching assistant" are not alike for sharing "assistant"), each weighted
by log(1 + count) times the inverse of how many titles' profiles hold it. That second weight is the
TF-IDF idea (Salton & Buckley 1988, "Term-weighting approaches in automatic text retrieval") applied
to titles instead of postings: boilerplate pasted under every job weighs nothing. Profiles are
compared by cosine.

How alike is alike enough depends on how many postings a profile was made from: two postings of
one job share less than two hundred do. The bundle measures it on its own dump, for profiles of 1,
2, 4, 8 and 16 postings (`SIZES`): for titles named often enough, two disjoint samples of those
sizes give the cosine of one job with itself (`same_job`, the median), and samples of two different
titles the cosine two jobs reach by chance (`chance`, high quantiles). The relation hint and the
filters read both at the sizes of the two titles they compare, so a title seen once is judged by
what one posting can show, and a neighbour that no more alike than chance is dropped. The median
cosine of a frequent title's two halves (`split_half`) is the same-job scale at large sizes.
"""

from __future__ import annotations

import multiprocessing
import random
from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import sparse

from training.config import DutiesSection
from training.profiles import Bag, gather, lines, profiles, summed, words
from training.titles import fragments
from widen.model.neighbours import top_k_rows

__all__ = ["TitleTable", "title_table", "SIZES"]

#: The profile sizes (postings) the same-job and chance cosines are measured at.
SIZES = (1, 2, 4, 8, 16)
#: Titles named by at least this many postings give the split-half scale.
SPLIT_HALF_POSTINGS = 20
#: Postings of a title kept to draw samples from, and titles sampled for each pair of sizes.
_KEPT, _SAMPLED = 2 * SIZES[-1], 300
CHANCE_QUANTILES = (0.9, 0.95, 0.99)


@dataclass
class TitleTable:
    """Every title with a profile (keys, sorted), how many postings name it, its `top_k` titles with the
    most alike duties (rows of this table) and their cosines; and what the profiles were made of."""

    keys: list[str]
    counts: list[int]
    index: npt.NDArray[np.int32]
    similarity: npt.NDArray[np.float32]
    stats: dict[str, Any] = field(default_factory=dict)


def _sample_profiles(
    kept: list[list[Bag]], picks: list[tuple[int, list[int]]], idf: npt.NDArray[np.float64], width: int
) -> sparse.csr_matrix:
    """One profile a pick: the sum of the chosen postings' bags of one title, weighted as the titles' are."""
    return profiles(summed([[kept[t][n] for n in chosen] for t, chosen in picks], width), idf)


def _calibration(
    kept: list[list[Bag]], full: sparse.csr_matrix, idf: npt.NDArray[np.float64], apart: float, seed: int
) -> dict[str, Any]:
    """The same-job median and the chance quantiles of the profile cosine, for each pair of sizes. Chance
    is measured on pairs of titles whose whole profiles are less alike than `apart` (two names of one
    job are not two different jobs, however different their names)."""
    rng = random.Random(seed)
    width = full.shape[1]
    same: list[list[float | None]] = []
    chance: dict[str, list[list[float | None]]] = {str(q): [] for q in CHANCE_QUANTILES}
    for a in SIZES:
        same.append([])
        for q in chance:
            chance[q].append([])
        for b in SIZES:
            if b < a:  # the measure is symmetric in the two sizes
                same[-1].append(same[SIZES.index(b)][SIZES.index(a)])
                for q in chance:
                    chance[q][-1].append(chance[q][SIZES.index(b)][SIZES.index(a)])
                continue
            deep = [t for t, bags in enumerate(kept) if len(bags) >= a + b]
            rng.shuffle(deep)
            left, right = [], []
            for t in deep[:_SAMPLED]:
                chosen = rng.sample(range(len(kept[t])), a + b)
                left.append((t, chosen[:a]))
                right.append((t, chosen[a:]))
            own = np.asarray(
                _sample_profiles(kept, left, idf, width).multiply(_sample_profiles(kept, right, idf, width)).sum(axis=1)
            ).ravel()
            same[-1].append(round(float(np.median(own)), 4) if len(own) >= 10 else None)
            xs = [t for t, bags in enumerate(kept) if len(bags) >= a]
            ys = [t for t, bags in enumerate(kept) if len(bags) >= b]
            drawn = [(rng.choice(xs), rng.choice(ys)) for _ in range(_SAMPLED * 4)] if len(xs) > 1 < len(ys) else []
            drawn = [(x, y) for x, y in drawn if x != y]
            close = (
                np.asarray(full[[x for x, _ in drawn]].multiply(full[[y for _, y in drawn]]).sum(axis=1)).ravel()
                if drawn
                else np.zeros(0)
            )
            pairs = [
                ((x, rng.sample(range(len(kept[x])), a)), (y, rng.sample(range(len(kept[y])), b)))
                for (x, y), cos in zip(drawn, close.tolist(), strict=True)
                if cos < apart
            ]
            if len(pairs) >= 30:
                one = _sample_profiles(kept, [p for p, _ in pairs], idf, width)
                two = _sample_profiles(kept, [q for _, q in pairs], idf, width)
                by_chance = np.asarray(one.multiply(two).sum(axis=1)).ravel()
            for q in chance:
                chance[q][-1].append(round(float(np.quantile(by_chance, float(q))), 4) if len(pairs) >= 30 else None)
    return {"sizes": list(SIZES), "same_job": same, "chance": chance}


_profiles_of: sparse.csr_matrix | None = None  # the matrix a forked worker reads its row blocks from


def _block(start: int, stop: int, k: int) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float32]]:
    """One block of rows of the title table: each row's `k` most alike other titles (runs in a worker, too)."""
    matrix = _profiles_of
    assert matrix is not None
    sims = (matrix[start:stop] @ matrix.T).toarray().astype(np.float32)
    sims[np.arange(stop - start), np.arange(start, stop)] = -np.inf
    return top_k_rows(sims, k)


def _most_alike(
    matrix: sparse.csr_matrix, k: int, block_rows: int, workers: int
) -> tuple[npt.NDArray[np.int32], npt.NDArray[np.float32]]:
    """Each profile's `k` most alike others by cosine, a block of rows at a time; with `workers` above 1 the
    blocks are shared among forked processes (the same numbers: each block is worked out as one process
    would)."""
    global _profiles_of
    rows = matrix.shape[0]
    step = max(block_rows // workers, 1)  # as many rows in the blocks being worked at once as one process has
    blocks = [(start, min(start + step, rows), k) for start in range(0, rows, step)]
    _profiles_of = matrix
    try:
        if workers > 1 and len(blocks) > 1:
            with multiprocessing.get_context("fork").Pool(workers) as pool:
                done = pool.starmap(_block, blocks, chunksize=1)
        else:
            done = [_block(*b) for b in blocks]
    finally:
        _profiles_of = None
    index = np.zeros((rows, k), dtype=np.int32)
    similarity = np.zeros((rows, k), dtype=np.float32)
    for (start, stop, _), (idx, sims) in zip(blocks, done, strict=True):
        index[start:stop], similarity[start:stop] = idx, sims
    return index, similarity


def title_table(
    postings: Path,
    vocabulary: Mapping[str, int],
    config: DutiesSection,
    related: float = 0.3,
    seed: int = 1,
    workers: int = 1,
) -> TitleTable:
    """Read the scratch file of postings (`title entries<TAB>description entries<TAB>titles named` a line)
    twice: once to count the postings naming each title, once to gather their descriptions. `related`
    is the share of the split-half cosine below which two whole profiles are two different jobs (the
    expansion option `related_duties`), for the chance measure. `workers` processes share the table's row
    blocks."""
    named: Counter[str] = Counter()
    for _, _, names in lines(postings):
        named.update(set(words(names)))
    pieces = fragments(named)
    keys = sorted(t for t, n in named.items() if n >= config.min_postings and t not in pieces)
    empty = TitleTable(keys[:0], [], np.zeros((0, 0), np.int32), np.zeros((0, 0), np.float32), {"titles": 0})
    if len(keys) < 2:
        return empty
    row_of = {t: i for i, t in enumerate(keys)}
    gathered = gather(postings, row_of, vocabulary, seed, _KEPT, workers)
    width = len(vocabulary)
    df = np.bincount(gathered.whole.indices, minlength=width).astype(np.float64)
    idf = np.where(df > 0, np.log(len(keys) / np.maximum(df, 1)), 0.0)
    matrix = profiles(gathered.whole, idf)
    index, similarity = _most_alike(matrix, min(config.top_k, len(keys) - 1), config.block_rows, workers)
    enough = [r for r, t in enumerate(keys) if named[t] >= SPLIT_HALF_POSTINGS]
    a = profiles(gathered.halves[0][enough], idf)
    b = profiles(gathered.halves[1][enough], idf)
    split = np.asarray(a.multiply(b).sum(axis=1)).ravel()
    split_half = round(float(np.median(split)), 4) if len(enough) else None
    stats: dict[str, Any] = {
        "titles": len(keys),
        "min_postings": config.min_postings,
        "split_half": split_half,
        "split_half_titles": len(enough),
        **_calibration(gathered.kept, matrix, idf, related * (split_half or 1.0), seed),
    }
    return TitleTable(keys, [named[t] for t in keys], index, similarity, stats)
