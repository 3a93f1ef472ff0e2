"""The title table's gathering (`training.profiles`) against the plain version it replaced: each title's
counts summed entry by entry in Counters, a reservoir of Counters, and the TF-IDF rows weighted one
entry at a time (the weighting of Salton & Buckley 1988, "Term-weighting approaches in automatic text
retrieval": log(1 + tf) x idf, cosine-normalised)."""

from __future__ import annotations

import math
import random
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from scipy import sparse

from training import profiles
from training.profiles import gather, summed

_WORDS = [f"w{n}" for n in range(50)] + ["care_assistant", "care", "assistant"]
_VOCABULARY = {w: n for n, w in enumerate(_WORDS)}


def _postings(path: Path, count: int) -> Path:
    rng = random.Random(11)
    titles = ["care_assistant", "hgv_driver", "staff_nurse", "chef", "porter", "cleaner"]
    out = []
    for _ in range(count):
        named = rng.sample(titles, rng.randrange(0, 3))  # some name none, some two
        body = " ".join(rng.choice(_WORDS) for _ in range(rng.randrange(0, 30)))
        out.append(f"{' '.join(named[:1])}\t{body}\t{' '.join(named)}\n")
    path.write_text("".join(out), encoding="utf-8")
    return path


def _plain(path: Path, row_of: dict[str, int], keep: int, seed: int) -> tuple[list[Counter[int]], ...]:
    """The gathering as first written: Counters updated entry by entry, a reservoir of Counters."""
    size = len(row_of)
    halves: list[list[Counter[int]]] = [[Counter() for _ in range(size)] for _ in range(2)]
    kept: list[list[Counter[int]]] = [[] for _ in range(size)]
    seen, rng = [0] * size, random.Random(seed)
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines()):
        head, body, names = line.split("\t")
        mine = [row_of[t] for t in dict.fromkeys(names.split()) if t in row_of]
        if not mine:
            continue
        own = {w for t in head.split() + names.split() for w in t.split("_")}
        said: Counter[int] = Counter()
        for e, n in Counter(body.split()).items():
            if e in _VOCABULARY and own.isdisjoint(e.split("_")):
                said[_VOCABULARY[e]] = n
        for r in mine:
            halves[number % 2][r].update(said)
            seen[r] += 1
            if len(kept[r]) < keep:
                kept[r].append(said)
            elif (j := rng.randrange(seen[r])) < keep:
                kept[r][j] = said
    return halves[0], halves[1], kept  # type: ignore[return-value]


def _as_counters(matrix: sparse.csr_matrix) -> list[Counter[int]]:
    return [Counter(dict(zip(row.indices.tolist(), row.data.tolist(), strict=True))) for row in matrix]


def test_gathering_in_chunks_sums_and_keeps_what_the_plain_counters_do(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = _postings(tmp_path / "postings.txt", 3000)
    row_of = {t: n for n, t in enumerate(["care_assistant", "chef", "cleaner", "hgv_driver", "porter", "staff_nurse"])}
    even, odd, kept = _plain(path, row_of, keep=8, seed=3)
    monkeypatch.setattr(profiles, "CHUNK", 7)  # many chunks, and parts cut mid-chunk
    for workers in (1, 2, 3):
        got = gather(path, row_of, _VOCABULARY, seed=3, keep=8, workers=workers)
        assert _as_counters(got.halves[0]) == even and _as_counters(got.halves[1]) == odd
        assert _as_counters(got.whole) == [a + b for a, b in zip(even, odd, strict=True)]
        for mine, plain in zip(got.kept, kept, strict=True):
            assert len(mine) == len(plain) == 8
            assert [Counter(dict(zip(c.tolist(), n.tolist(), strict=True))) for c, n in mine] == plain
    assert sum(even[0].values()) > 1000  # the postings did say things
    # The title's own words are left out: "care assistant" never counts "care" or "assistant".
    assert not {_VOCABULARY["care"], _VOCABULARY["assistant"]} & set(got.whole[0].indices.tolist())


def test_profiles_weigh_each_entry_as_log_one_plus_count_times_idf_at_unit_length() -> None:
    rng = np.random.default_rng(2)
    bags = [Counter({int(c): int(rng.integers(1, 9)) for c in rng.choice(40, rng.integers(0, 15))}) for _ in range(30)]
    idf = rng.random(40) * 3
    idf[5] = 0.0  # an entry every title says: weighs nothing
    got = profiles.profiles(
        summed([[(np.array(list(b), np.int32), np.array(list(b.values()), np.int64))] for b in bags], 40), idf
    )
    for row, bag in zip(got, bags, strict=True):
        weights = {c: math.log1p(n) * idf[c] for c, n in bag.items()}
        norm = math.sqrt(sum(w * w for w in weights.values())) or 1.0
        expected = np.zeros(40)
        for c, w in weights.items():
            expected[c] = w / norm
        assert np.allclose(row.toarray().ravel(), expected, rtol=1e-15, atol=0)
