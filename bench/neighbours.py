"""The neighbour table: blocked matrix products against gensim's most_similar once per entry."""

from __future__ import annotations

import time
from pathlib import Path
from typing import Any

import numpy as np

from widen.neighbours import normalise_rows, top_k_table
from widen.store import Store

__all__ = ["bench_neighbours"]


def _table_against_most_similar(wv: Any, k: int, sample: int | None) -> dict[str, Any]:
    normed = normalise_rows(wv.vectors)
    started = time.perf_counter()
    _, sims = top_k_table(normed, k)
    blocked = time.perf_counter() - started
    started = time.perf_counter()
    normed @ normed.T  # the matrix product alone: the floor for any exact method
    product = time.perf_counter() - started
    keys = wv.index_to_key if sample is None else wv.index_to_key[:sample]
    identical = True
    started = time.perf_counter()
    for i, key in enumerate(keys):
        ref = np.array([s for _, s in wv.most_similar(key, topn=k)], dtype=np.float32)
        identical &= bool(np.allclose(ref, sims[i], atol=1e-5))
    one_by_one = (time.perf_counter() - started) * len(wv) / len(keys)
    return {
        "entries": len(wv),
        "top_k": k,
        "blocked_s": round(blocked, 4),
        "matrix_product_only_s": round(product, 4),
        "most_similar_s": round(one_by_one, 4),
        "most_similar_extrapolated_from": len(keys),
        "speedup": round(one_by_one / blocked, 1),
        "identical_similarities": identical,
    }


def bench_neighbours(store: Path) -> dict[str, Any]:
    """Blocked matrix products against most_similar once per entry: demo vectors and a 20,000-entry set."""
    from gensim.models import KeyedVectors

    demo = _table_against_most_similar(Store(store).open_bundle().vectors, 50, None)
    rng = np.random.default_rng(0)
    synthetic = KeyedVectors(100)
    synthetic.add_vectors([f"entry{i}" for i in range(20000)], rng.normal(size=(20000, 100)).astype(np.float32))
    large = _table_against_most_similar(synthetic, 50, 2000)
    return {"demo": demo, "synthetic_20000": large, "target": ">= 20"}
