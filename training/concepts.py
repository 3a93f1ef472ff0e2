"""Learning a bundle's concepts (`widen.model.concepts`): an even sample of the dump's postings, their
vectors, spherical k-means at each size, and each concept's label (its postings' most frequent titles).

Spherical k-means (Dhillon & Modha 2001): Lloyd's iterations (Lloyd 1982) with the cosine, every
centroid the unit mean of its members; first centroids by k-means++ seeding (Arthur & Vassilvitskii
2007) with 1 - cosine as the distance.

**Carrying concepts over.** An index tagged last night must keep matching tonight's queries, but a
retrained skip-gram model lives in a space of its own (the same geometry, turned). Tonight's vectors
are turned onto last night's with the orthogonal Procrustes solution over the entries both know
(Schoenemann 1966; the way diachronic embeddings are aligned, Hamilton, Leskovec & Jurafsky 2016;
scipy's `orthogonal_procrustes`), last night's centroids are turned back into tonight's space, and a
few Lloyd iterations start from them: concept 17 stays concept 17, and the lineage stays. Where that
cannot be done (no serving bundle with concepts, other sizes or prefix, too few shared entries) the
set starts afresh with a new lineage, and the index must be tagged again (`docs/concepts.md`).
"""

from __future__ import annotations

import hashlib
import time
from collections import Counter
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy import sparse
from scipy.linalg import orthogonal_procrustes

from training.config import ConceptsSection
from widen.model.concepts import ConceptSet, Matrix, PostingVectors, unit_rows
from widen.text.forms import phrase_of_key

__all__ = ["spherical_kmeans", "fit_concepts", "Previous", "align"]

#: Entries (most frequent first) the Procrustes turn is fitted on, and the fewest it needs.
_ALIGN_ENTRIES, _ALIGN_MIN = 20_000, 200
_CHUNK = 16_384


@dataclass(frozen=True)
class Previous:
    """The serving bundle's concepts and the vectors they were learned with."""

    version: str
    concepts: ConceptSet
    normed: Matrix
    keys: list[str]


def assign(x: Matrix, centroids: Matrix) -> npt.NDArray[np.int64]:
    """Each row's nearest centroid by cosine (rows and centroids at unit length)."""
    out = np.empty(len(x), dtype=np.int64)
    for start in range(0, len(x), _CHUNK):
        out[start : start + _CHUNK] = np.argmax(x[start : start + _CHUNK] @ centroids.T, axis=1)
    return out


def _plus_plus(x: Matrix, k: int, rng: np.random.Generator) -> Matrix:
    """k-means++ seeding (Arthur & Vassilvitskii 2007) with distance 1 - cosine."""
    chosen = [int(rng.integers(len(x)))]
    closest = np.maximum(1.0 - x @ x[chosen[0]], 0.0)
    for _ in range(1, k):
        weights = closest**2
        total = float(weights.sum())
        pick = int(rng.choice(len(x), p=weights / total)) if total > 0 else int(rng.integers(len(x)))
        chosen.append(pick)
        closest = np.minimum(closest, np.maximum(1.0 - x @ x[pick], 0.0))
    out: Matrix = x[chosen].copy()
    return out


def spherical_kmeans(
    x: Matrix, k: int, rng: np.random.Generator, iterations: int, init: Matrix | None = None
) -> tuple[Matrix, npt.NDArray[np.int64]]:
    """Centroids (unit rows) and each row's cluster. With `init`, Lloyd starts from those centroids and
    cluster j stays cluster j; a cluster left empty keeps its centroid."""
    centroids = unit_rows(init) if init is not None else _plus_plus(x, k, rng)
    labels = assign(x, centroids)
    for _ in range(iterations):
        members = sparse.csr_matrix((np.ones(len(x), np.float32), (labels, np.arange(len(x)))), shape=(k, len(x)))
        sums = np.asarray(members @ x, dtype=np.float32)
        empty = np.asarray(members.sum(axis=1)).ravel() == 0
        sums[empty] = centroids[empty]
        centroids = unit_rows(sums)
        new = assign(x, centroids)
        if np.array_equal(new, labels):
            break
        labels = new
    return centroids, labels


def align(new: Matrix, new_keys: list[str], counts: npt.NDArray[np.float64], old: Previous) -> Matrix | None:
    """The orthogonal turn R with new @ R close to old over the shared entries; None with too few."""
    old_index = {k: j for j, k in enumerate(old.keys)}
    order = np.argsort(-np.asarray(counts), kind="stable")
    pairs = [(int(j), old_index[new_keys[j]]) for j in order if new_keys[j] in old_index][:_ALIGN_ENTRIES]
    if len(pairs) < _ALIGN_MIN or new.shape[1] != old.normed.shape[1]:
        return None
    a = np.asarray(new[[p for p, _ in pairs]], dtype=np.float64)
    b = np.asarray(old.normed[[q for _, q in pairs]], dtype=np.float64)
    turn, _ = orthogonal_procrustes(a, b)
    out: Matrix = turn.astype(np.float32)
    return out


def _common(texts: Matrix) -> Matrix | None:
    """The first principal direction of the text parts, uncentred (Arora, Liang & Ma 2017)."""
    if len(texts) < 2:
        return None
    _, vectors = np.linalg.eigh(np.asarray(texts, dtype=np.float64).T @ texts)
    out: Matrix = vectors[:, -1].astype(np.float32)
    return out


def _labels(titles: list[str], labels: npt.NDArray[np.int64], k: int, top: int) -> list[list[str]]:
    counted: list[Counter[str]] = [Counter() for _ in range(k)]
    for title, cluster in zip(titles, labels.tolist(), strict=True):
        if title:
            counted[cluster][title] += 1
    return [[t for t, _ in sorted(c.items(), key=lambda kv: (-kv[1], kv[0]))[:top]] for c in counted]


def _sample(postings: Path, used: int, size: int) -> Iterator[tuple[list[str], list[str], str]]:
    """An even sample of the scratch file of postings (`training.final_pass`): title entries, description
    entries, and the first title the posting names (its label)."""
    step = max(1, used // size)
    taken = 0
    with postings.open(encoding="utf-8") as fh:
        for n, line in enumerate(fh):
            if n % step:
                continue
            head, _, rest = line.rstrip("\n").partition("\t")
            body, _, names = rest.partition("\t")
            yield head.split(), body.split(), phrase_of_key(names.split()[0]) if names.strip() else ""
            taken += 1
            if taken >= size:
                return


def _sampled_vectors(
    postings: Path,
    used: int,
    recipe: Callable[[Matrix | None], PostingVectors],
    config: ConceptsSection,
    progress: Callable[[int], None],
) -> tuple[Matrix, list[str], Matrix | None]:
    """The sampled postings' vectors (those with a word the bundle knows), their titles, and the
    dump's common direction (None when it is not taken out)."""
    plain = recipe(None)
    parts, titles = [], []
    for head, body, title in _sample(postings, used, config.sample):
        title_rows = plain.rows_of(head)
        parts.append(plain.parts(title_rows, title_rows + plain.rows_of(body)))
        titles.append(title)
        progress(1)
    texts = np.stack([p[1] for p in parts]) if parts else np.zeros((0, plain.normed.shape[1]), np.float32)
    common = _common(unit_rows(texts)) if config.remove_common else None
    vectors = recipe(common).combine(np.stack([p[0] for p in parts]), texts) if parts else texts
    known = np.any(vectors != 0, axis=1)
    return vectors[known], [t for t, k in zip(titles, known.tolist(), strict=True) if k], common


def fit_concepts(
    postings: Path,
    used: int,
    recipe: Callable[[Matrix | None], PostingVectors],
    keys: list[str],
    counts: npt.NDArray[np.float64],
    config: ConceptsSection,
    version: str,
    seed: int,
    previous: Previous | None,
    progress: Callable[[int], None] = lambda n: None,
) -> tuple[ConceptSet, dict[str, Any]]:
    """The concepts of a dump from the scratch file of its postings: `recipe(common)` gives the posting
    vectors of the bundle being trained; `previous`, the serving bundle's concepts."""
    started = time.monotonic()
    known, keep_titles, common = _sampled_vectors(postings, used, recipe, config, progress)
    same = previous is not None and config.carry_over and list(previous.concepts.sizes) == config.sizes
    same = same and previous is not None and previous.concepts.prefix == config.token_prefix
    same = same and previous is not None and (previous.concepts.common is None) == (common is None)
    turn = align(recipe(None).normed, keys, counts, previous) if same and previous is not None else None
    rng = np.random.default_rng(seed)
    blocks, labels, kept = [], [], np.ones(len(known), dtype=bool)
    for n, k in enumerate(config.sizes):
        k_here = min(k, max(len(known), 1))
        if turn is not None and previous is not None:
            start = unit_rows(previous.concepts.of_size(n) @ turn.T)
            centroids, member = spherical_kmeans(known, k, rng, config.continue_iterations, init=start)
            kept &= assign(known, start) == member
        else:
            centroids, member = spherical_kmeans(known, k_here, rng, config.iterations)
            if k_here < k:  # fewer postings than clusters: the rest are copies, never nearest first
                centroids = np.vstack([centroids, np.repeat(centroids[:1], k - k_here, axis=0)])
        blocks.append(centroids)
        labels += _labels(keep_titles, member, k, config.label_titles)
    continued = turn is not None and previous is not None
    lineage = previous.concepts.lineage if continued and previous else hashlib.sha1(version.encode()).hexdigest()[:12]
    concepts = ConceptSet(
        tuple(config.sizes),
        np.vstack(blocks).astype(np.float32),
        labels,
        config.token_prefix,
        lineage,
        previous.version if continued and previous else None,
        config.title_weight,
        config.sif_a,
        common,
    )
    stats = {
        "sizes": list(config.sizes),
        "sample": len(known),
        "lineage": lineage,
        "continues": concepts.continues,
        "kept_share": round(float(kept.mean()), 4) if continued and len(known) else None,
        "seconds": round(time.monotonic() - started, 2),
    }
    return concepts, stats
