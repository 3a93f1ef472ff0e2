"""Expansion in-process: a known phrase, a multi-segment query, a cache hit, composed search."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np

from bench.common import median_us
from widen.neighbours import normalise_rows, top_k_for_vector
from widen.store import Store

__all__ = ["bench_expansion"]


def bench_expansion(store: Path, demo: Path) -> dict[str, Any]:
    """Expansion in-process: a known phrase (cache off), a multi-segment query, a cache hit, composed search."""
    from service.cache import ResultCache
    from widen.decisions import DecisionSet
    from widen.evaluation.scorecard import scorecard
    from widen.expansion import expand
    from widen.lexicon import Lexicon
    from widen.options import ExpansionOptions

    lexicon = Lexicon(Store(store).open_bundle())
    options, none = ExpansionOptions(), DecisionSet()
    for q in ("staff nurse", "night shift staff nurse hensby"):
        expand(lexicon, none, q, options)  # warm the per-entry memo, as a serving worker would be
    cache: ResultCache[object] = ResultCache(1000)
    key = (lexicon.version, none.version, "staff nurse", options)
    cache.put(key, expand(lexicon, none, "staff nurse", options))
    rng = np.random.default_rng(0)
    big = normalise_rows(rng.normal(size=(100_000, 100)))
    queries = normalise_rows(rng.normal(size=(50, 100)))
    counter = iter(range(10**9))
    truth = json.loads((demo / "truth.json").read_text(encoding="utf-8"))
    card = scorecard(lexicon, truth, options)
    return {
        "known_phrase_median_us": median_us(lambda: expand(lexicon, none, "staff nurse", options), 3000),
        "multi_segment_median_us": median_us(
            lambda: expand(lexicon, none, "night shift staff nurse hensby", options), 2000
        ),
        "cache_hit_median_us": median_us(lambda: cache.get(key), 3000),
        "composed_search_100k_median_ms": round(
            median_us(lambda: top_k_for_vector(big, queries[next(counter) % 50], 50), 200) / 1000, 3
        ),
        "targets": {"known_phrase_median_us": "<= 200", "composed_search_100k_median_ms": "<= 5"},
        "truth": {k: round(v, 3) if isinstance(v, float) else v for k, v in card.items() if k != "families"},
    }
