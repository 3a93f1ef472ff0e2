"""The precomputed neighbour table against gensim's own KeyedVectors.most_similar."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from widen.model.neighbours import normalise_rows, top_k_for_vector, top_k_table
from widen.model.store import Store


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


def _full_sort(normed: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Reference: every similarity of every row sorted (similarity descending, index ascending),
    the row itself left out; plain numpy, no blocking, no heaps."""
    sims = normed @ normed.T
    np.fill_diagonal(sims, -np.inf)
    order = np.lexsort((np.broadcast_to(np.arange(len(sims)), sims.shape), -sims), axis=1)[:, :k]
    return order, np.take_along_axis(sims, order, axis=1)


def test_table_equals_full_sort_with_floors_in_use() -> None:
    # 3,000 entries: large enough that each row starts from a sampled floor (widen.model.neighbours._floors).
    rng = np.random.default_rng(8)
    normed = normalise_rows(rng.normal(size=(3000, 16)))
    idx, sims = top_k_table(normed, 20, block_rows=256)
    ref_idx, ref_sims = _full_sort(normed, 20)
    assert np.allclose(sims, ref_sims, atol=1e-6)
    differ = idx != ref_idx
    # Only a tie (equal within float rounding) may swap two entries.
    assert np.all(np.abs(sims[differ] - ref_sims[differ]) < 1e-6)


def test_ties_are_ordered_by_index() -> None:
    # Every vector three times: each row's neighbours come in tied pairs and triples.
    rng = np.random.default_rng(9)
    base = normalise_rows(rng.normal(size=(40, 6)))
    normed = np.ascontiguousarray(np.repeat(base, 3, axis=0))
    idx, sims = top_k_table(normed, 10, block_rows=16)
    assert np.all(np.diff(sims, axis=1) <= 0)  # by similarity descending
    tied = sims[:, 1:] == sims[:, :-1]
    assert tied.sum() > len(normed)  # the data does tie
    assert np.all(idx[:, 1:][tied] > idx[:, :-1][tied])  # equal similarities: lower index first
    # The copies of a row's own vector (similarity 1) always come first.
    for i in range(len(normed)):
        twins = {3 * (i // 3) + n for n in range(3)} - {i}
        assert set(idx[i, :2].tolist()) == twins


def test_rows_with_a_floor_too_high_are_done_again(monkeypatch: pytest.MonkeyPatch) -> None:
    import widen.model.neighbours as neighbours

    rng = np.random.default_rng(10)
    normed = normalise_rows(rng.normal(size=(500, 12)))

    def too_high(matrix: np.ndarray, k: int) -> np.ndarray:
        floors = np.full(len(matrix), -np.inf, dtype=np.float32)
        floors[::3] = 0.999  # almost nothing is that close: these rows come out short
        return floors

    monkeypatch.setattr(neighbours, "_floors", too_high)
    idx, sims = neighbours.top_k_table(normed, 15, block_rows=64)
    ref_idx, ref_sims = _full_sort(normed, 15)
    assert np.array_equal(idx, ref_idx)
    assert np.allclose(sims, ref_sims, atol=1e-6)


@given(st.integers(min_value=1, max_value=23))
def test_every_pair_of_blocks_once_and_no_block_twice_in_a_round(blocks: int) -> None:
    from widen.model.neighbours import _rounds

    seen = []
    for first, second in _rounds(blocks):
        in_round = [*first.tolist(), *[b for a, b in zip(first, second, strict=True) if a != b]]
        assert len(in_round) == len(set(in_round))  # two threads never touch one block's heaps
        seen += list(zip(first.tolist(), second.tolist(), strict=True))
    assert sorted(seen) == [(a, b) for a in range(blocks) for b in range(a, blocks)]
