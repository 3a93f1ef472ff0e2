"""Concepts: what postings say, as clusters of posting vectors at several granularities.

A posting's vector is worked out from its own words with the bundle's skip-gram vectors (the
recipe below); at training, spherical k-means (`training.concepts`) clusters a sample of those
vectors at each size in `concepts.sizes`. A posting is tagged with the id of its nearest cluster at
each size, as ordinary tokens ("wc128n17": prefix, size, "n", the cluster's number) that the board
indexes in a field of its own; a query adds clauses for the clusters nearest its own vector, so a
posting whose title no list names is still found by what it says.

The recipe: the unit mean of the title's entries (the job it names), plus the smooth inverse
frequency mean of every entry of title and description (Arora, Liang & Ma 2017: each entry weighted
a / (a + p), p its share of the dump's tokens), with the dump's common direction taken out of the
second where the bundle keeps one (the same paper's common-component removal); the sum at unit
length. Place and employer names are left out: they say where, not what.

Files of a bundle with concepts: `concepts.json` (sizes, token prefix, recipe, labels, lineage) and
`concept_centroids.npy` (every size's centroids, unit rows, one after the other).
"""

from __future__ import annotations

import json
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from widen.model.phrases import Phraser
from widen.text.tokenize import in_windows, sentences

__all__ = ["ConceptSet", "PostingVectors", "CONCEPTS", "CONCEPT_CENTROIDS", "nearest", "tag_rows"]

CONCEPTS = "concepts.json"
CONCEPT_CENTROIDS = "concept_centroids.npy"
_TOKEN = re.compile(r"^([a-z]+)(\d+)n(\d+)$")

Matrix = npt.NDArray[np.float32]


def unit_rows(x: npt.ArrayLike) -> Matrix:
    """Each row at unit length (a zero row stays zero)."""
    m = np.asarray(x, dtype=np.float32)
    norms = np.linalg.norm(m, axis=-1, keepdims=True)
    out: Matrix = np.divide(m, norms, out=np.zeros_like(m), where=norms > 0)
    return out


@dataclass(frozen=True)
class ConceptSet:
    """A bundle's concepts. `centroids` holds every size's centroids one after the other; `labels` each
    concept's most frequent titles; `lineage` names the set of ids an index was tagged with (it stays
    when a retrain continues last night's concepts, `continues`); `common` is the direction the recipe
    takes out of the text part (None: none is taken out)."""

    sizes: tuple[int, ...]
    centroids: Matrix
    labels: list[list[str]]
    prefix: str
    lineage: str
    continues: str | None
    title_weight: float
    sif_a: float
    common: Matrix | None = None

    @property
    def offsets(self) -> list[int]:
        return [int(x) for x in np.cumsum((0, *self.sizes))]

    def of_size(self, n: int) -> Matrix:
        """The centroids of the `n`-th size (coarse first)."""
        start, stop = self.offsets[n], self.offsets[n + 1]
        return self.centroids[start:stop]

    def token(self, n: int, local: int) -> str:
        """The token of concept `local` of the `n`-th size."""
        return f"{self.prefix}{self.sizes[n]}n{local}"

    def flat(self, token: str) -> int | None:
        """The row of `token` in `centroids` and `labels`; None for a token of no concept here."""
        found = _TOKEN.match(token)
        if not found or found.group(1) != self.prefix:
            return None
        size, local = int(found.group(2)), int(found.group(3))
        if size not in self.sizes or local >= size:
            return None
        return self.offsets[self.sizes.index(size)] + local

    def write(self, folder: Path) -> None:
        data = {
            "sizes": list(self.sizes),
            "prefix": self.prefix,
            "lineage": self.lineage,
            "continues": self.continues,
            "title_weight": self.title_weight,
            "sif_a": self.sif_a,
            "common": None if self.common is None else [float(v) for v in self.common],
            "labels": self.labels,
        }
        (folder / CONCEPTS).write_text(json.dumps(data) + "\n", encoding="utf-8")
        np.save(folder / CONCEPT_CENTROIDS, np.asarray(self.centroids, dtype=np.float32))

    @classmethod
    def read(cls, folder: Path) -> ConceptSet | None:
        """The bundle's concepts; None for a bundle made without them."""
        if not (folder / CONCEPTS).is_file():
            return None
        data = json.loads((folder / CONCEPTS).read_text(encoding="utf-8"))
        common = data.get("common")
        return cls(
            tuple(int(s) for s in data["sizes"]),
            np.load(folder / CONCEPT_CENTROIDS),
            [list(label) for label in data["labels"]],
            str(data["prefix"]),
            str(data["lineage"]),
            data.get("continues"),
            float(data["title_weight"]),
            float(data["sif_a"]),
            None if common is None else np.asarray(common, dtype=np.float32),
        )


class PostingVectors:
    """The recipe (module docstring) over a bundle's vectors. Parameters: `normed`, the unit input vectors;
    `index`, key -> row; `counts`, each entry's count in the dump; `phraser`, the bundle's phrase passes;
    `leave_out`, entries never counted (place and employer names); the recipe's `title_weight`, `sif_a`
    and `common` direction."""

    def __init__(
        self,
        normed: Matrix,
        index: Mapping[str, int],
        counts: npt.NDArray[np.float64],
        phraser: Phraser,
        leave_out: frozenset[str],
        title_weight: float,
        sif_a: float,
        common: Matrix | None = None,
    ) -> None:
        self.normed, self.index, self.phraser = normed, index, phraser
        self.leave_out = leave_out
        self.title_weight, self.sif_a = title_weight, sif_a
        total = max(float(np.sum(counts)), 1.0)
        self.sif: npt.NDArray[np.float64] = sif_a / (sif_a + np.asarray(counts, dtype=np.float64) / total)
        self.common = common

    def rows(self, text: str) -> list[int]:
        """The rows of the entries a text holds, phrased as the dump was."""
        return self.rows_of(key for sentence in sentences(text) for key in self.phraser(sentence))

    def rows_of(self, keys: Iterable[str]) -> list[int]:
        """The rows of the entries among `keys` that count (known, no place or employer, no number)."""
        out = []
        for key in keys:
            j = self.index.get(key)
            if j is not None and key not in self.leave_out and in_windows(key):
                out.append(j)
        return out

    def parts(self, title_rows: list[int], all_rows: list[int]) -> tuple[Matrix, Matrix]:
        """The title part (mean of the title's unit vectors) and the text part (SIF-weighted mean of all)."""
        d = self.normed.shape[1]
        title = self.normed[title_rows].mean(axis=0) if title_rows else np.zeros(d, np.float32)
        if all_rows:
            weights = self.sif[all_rows][:, None]
            text = (self.normed[all_rows] * weights).sum(axis=0) / len(all_rows)
        else:
            text = np.zeros(d, np.float32)
        return np.asarray(title, np.float32), np.asarray(text, np.float32)

    def combine(self, title: Matrix, text: Matrix) -> Matrix:
        """Rows of title parts and text parts into unit posting vectors (the common direction out of the
        text part first)."""
        text = np.atleast_2d(text).astype(np.float32)
        if self.common is not None:
            text = text - (text @ self.common)[:, None] * self.common[None, :]
        return unit_rows(self.title_weight * unit_rows(np.atleast_2d(title)) + unit_rows(text))

    def of_postings(self, postings: Iterable[tuple[str, str]]) -> Matrix:
        """Unit vectors of (title, description) pairs, one row each (a zero row: no known word)."""
        titles, texts = [], []
        for title, description in postings:
            title_rows = self.rows(title)
            t, x = self.parts(title_rows, title_rows + self.rows(description))
            titles.append(t)
            texts.append(x)
        if not titles:
            return np.zeros((0, self.normed.shape[1]), np.float32)
        return self.combine(np.stack(titles), np.stack(texts))

    def of_rows(self, rows: list[int]) -> Matrix:
        """The vector of a query's job entries, read as a posting whose title is those entries."""
        title, text = self.parts(rows, rows)
        out: Matrix = self.combine(title, text)[0]
        return out


def nearest(concepts: ConceptSet, vector: Matrix, n: int, per_size: int) -> list[tuple[int, float]]:
    """The `per_size` concepts of the `n`-th size nearest a unit vector: (local id, cosine), nearest first."""
    sims = concepts.of_size(n) @ vector
    k = min(per_size, len(sims))
    top = np.argpartition(-sims, k - 1)[:k]
    order = top[np.lexsort((top, -sims[top]))]
    return [(int(i), float(sims[i])) for i in order]


def tag_rows(concepts: ConceptSet, vectors: Matrix) -> list[list[str]]:
    """Each posting vector's tokens: its nearest concept at every size (none for a zero row)."""
    out: list[list[str]] = [[] for _ in range(len(vectors))]
    known = np.flatnonzero(np.any(vectors != 0, axis=1))
    if not len(known):
        return out
    for n in range(len(concepts.sizes)):
        best = np.argmax(vectors[known] @ concepts.of_size(n).T, axis=1)
        for row, local in zip(known.tolist(), best.tolist(), strict=True):
            out[row].append(concepts.token(n, local))
    return out
