"""The precomputed neighbour table against gensim's own KeyedVectors.most_similar."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from widen.neighbours import normalise_rows, top_k_for_vector, top_k_table
from widen.store import Store


def test_table_equals_gensim_most_similar(trained_store: Path) -> None:
    bundle = Store(trained_store).open_bundle()
    wv = bundle.vectors
    rng = np.random.default_rng(3)
    sample = rng.choice(len(wv), size=min(60, len(wv)), replace=False)
    k = 10
    for i in sample:
        key = wv.index_to_key[i]
        # Reference library: gensim KeyedVectors.most_similar (exact cosine over all entries).
        expected = wv.most_similar(key, topn=k)
        got = [
            (bundle.keys[j], float(s))
            for j, s in zip(bundle.neighbour_index[i, :k], bundle.neighbour_similarity[i, :k], strict=True)
        ]
        for (exp_key, exp_sim), (got_key, got_sim) in zip(expected, got, strict=True):
            assert abs(exp_sim - got_sim) < 1e-5, (key, exp_key, got_key)
            if exp_key != got_key:
                # Only a tie may swap two entries.
                assert abs(wv.similarity(key, exp_key) - wv.similarity(key, got_key)) < 1e-6


def test_blocked_table_equals_one_block() -> None:
    rng = np.random.default_rng(5)
    normed = normalise_rows(rng.normal(size=(300, 16)))
    whole = top_k_table(normed, 7, block_rows=300)
    blocked = top_k_table(normed, 7, block_rows=17)
    assert np.array_equal(whole[0], blocked[0])
    assert np.allclose(whole[1], blocked[1])


def test_entry_is_never_its_own_neighbour() -> None:
    rng = np.random.default_rng(6)
    normed = normalise_rows(rng.normal(size=(50, 8)))
    idx, _ = top_k_table(normed, 49, block_rows=8)
    assert all(i not in row for i, row in enumerate(idx))


def test_vector_search_equals_brute_force_numpy() -> None:
    rng = np.random.default_rng(7)
    normed = normalise_rows(rng.normal(size=(1000, 32)))
    query = normalise_rows(rng.normal(size=(1, 32)))[0]
    idx, sims = top_k_for_vector(normed, query, 12)
    brute = normed @ query
    order = np.argsort(-brute, kind="stable")[:12]
    assert np.array_equal(idx, order)
    assert np.allclose(sims, brute[order], atol=1e-6)
