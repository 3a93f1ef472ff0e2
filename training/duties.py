"""The duties a title comes with, and which titles come with the same duties.

Two names for one job are posted with the same duties, whatever words surround the names; a
close but different job shares some of them; another job, none. For every title entry named by
at least `min_postings` postings, its profile is what the descriptions of those postings say:
their entries (the title's own words left out, so "care assistant" and "teaching assistant" are
not alike for sharing "assistant"), each weighted by log(1 + count) times the inverse of how
many titles' profiles hold it. That second weight is the usual TF-IDF idea (Salton & Buckley
1988, "Term-weighting approaches in automatic text retrieval") applied to titles instead of
postings: boilerplate pasted under every job weighs nothing, a job's own duties weigh most.
Profiles are compared by cosine.

The bundle's own scale for "same job" comes from the same data: each title's postings are split
in two halves by posting number, and the median cosine of a title's two halves says how alike
two profiles of one job look in this dump (`split_half`). The relation hint compares a pair of
titles with that, so no threshold depends on how a board happens to write.
"""

from __future__ import annotations

import math
from collections import Counter
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import sparse

from training.config import DutiesSection
from widen.model.neighbours import top_k_rows
from widen.text.forms import PHRASE_JOINER

__all__ = ["DutyTable", "duty_table"]


@dataclass
class DutyTable:
    """Per vocabulary entry its row in the table (-1: no profile); per row the `top_k` titles with the
    most alike duties (vocabulary ids) and their cosines; and what the profiles were made of."""

    rows: npt.NDArray[np.int32]
    index: npt.NDArray[np.int32]
    similarity: npt.NDArray[np.float32]
    stats: dict[str, Any] = field(default_factory=dict)


def _words(entries: str) -> list[str]:
    return entries.split() if entries else []


def _profiles(bags: list[Counter[int]], idf: npt.NDArray[np.float64], width: int) -> sparse.csr_matrix:
    """Rows of log(1 + count) x idf, at unit length."""
    rows, cols, vals = [], [], []
    for r, bag in enumerate(bags):
        for col, n in bag.items():
            rows.append(r)
            cols.append(col)
            vals.append(math.log1p(n) * idf[col])
    matrix = sparse.csr_matrix((vals, (rows, cols)), shape=(len(bags), width), dtype=np.float64)
    norms = np.sqrt(np.asarray(matrix.multiply(matrix).sum(axis=1)).ravel())
    norms[norms == 0] = 1.0
    return sparse.csr_matrix(sparse.diags(1.0 / norms) @ matrix)


def duty_table(
    postings: Path, vocabulary: Mapping[str, int], is_title: Callable[[str], bool], config: DutiesSection
) -> DutyTable:
    """Read the scratch file of postings (`title entries<TAB>description entries` a line) twice: once
    to count the postings of each title, once to gather their descriptions."""
    size = len(vocabulary)
    named: Counter[str] = Counter()
    with postings.open(encoding="utf-8") as fh:
        for line in fh:
            head = line.split("\t", 1)[0]
            named.update({t for t in _words(head) if t in vocabulary and is_title(t)})
    titles = sorted(t for t, n in named.items() if n >= config.min_postings)
    row_of = {t: i for i, t in enumerate(titles)}
    halves: list[list[Counter[int]]] = [[Counter() for _ in titles] for _ in range(2)]
    with postings.open(encoding="utf-8") as fh:
        for number, line in enumerate(fh):
            head, _, body = line.rstrip("\n").partition("\t")
            mine = [row_of[t] for t in set(_words(head)) if t in row_of]
            if not mine:
                continue
            own = {w for t in _words(head) for w in t.split(PHRASE_JOINER)}
            said = Counter(
                vocabulary[e] for e in _words(body) if e in vocabulary and not own.intersection(e.split(PHRASE_JOINER))
            )
            for r in mine:
                halves[number % 2][r].update(said)
    rows = np.full(size, -1, dtype=np.int32)
    k = min(config.top_k, max(len(titles) - 1, 0))
    empty = DutyTable(rows, np.zeros((0, 0), np.int32), np.zeros((0, 0), np.float32), {"titles": 0})
    if len(titles) < 2:
        return empty
    whole = [a + b for a, b in zip(halves[0], halves[1], strict=True)]
    df = np.zeros(size, dtype=np.float64)
    for bag in whole:
        df[list(bag)] += 1
    idf = np.where(df > 0, np.log(len(titles) / np.maximum(df, 1)), 0.0)
    matrix = _profiles(whole, idf, size)
    ids = np.array([vocabulary[t] for t in titles], dtype=np.int32)
    rows[ids] = np.arange(len(titles), dtype=np.int32)
    index = np.zeros((len(titles), k), dtype=np.int32)
    similarity = np.zeros((len(titles), k), dtype=np.float32)
    for start in range(0, len(titles), config.block_rows):
        stop = min(start + config.block_rows, len(titles))
        sims = (matrix[start:stop] @ matrix.T).toarray().astype(np.float32)
        sims[np.arange(stop - start), np.arange(start, stop)] = -np.inf
        idx, val = top_k_rows(sims, k)
        index[start:stop] = ids[idx]
        similarity[start:stop] = val
    # The bundle's own scale of "same job": a title's two halves, for titles named often enough.
    enough = [r for r, t in enumerate(titles) if named[t] >= 4 * config.min_postings]
    a, b = _profiles([halves[0][r] for r in enough], idf, size), _profiles([halves[1][r] for r in enough], idf, size)
    split = np.asarray(a.multiply(b).sum(axis=1)).ravel()
    stats = {
        "titles": len(titles),
        "min_postings": config.min_postings,
        "split_half": round(float(np.median(split)), 4) if len(enough) else None,
        "split_half_titles": len(enough),
    }
    return DutyTable(rows, index, similarity, stats)
