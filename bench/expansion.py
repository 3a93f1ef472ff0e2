"""Expansion in-process over the distinct queries of a day's log, each once, and composed search.

A repeated warm phrase says little about a long-tail stream, where most queries come once. So the
distinct queries of `query_log.jsonl` are expanded once each, in the log's order:
- `prepared`: as the service serves a bundle (`widen.expansion.expand.prepare` ran at load, timed apart);
- `cold`: nothing kept from any earlier query (the lexicon's memo emptied before each one), the
  cost of a query whose every entry is new.
Queries are grouped by how many segments they have: a known phrase alone (one job segment) and
four segments ("pt care assistant jobs hensby"). Three rounds, each on a fresh lexicon, order of
the two ways alternating; the medians of the rounds' medians.
"""

from __future__ import annotations

import json
import statistics
import time
from pathlib import Path
from typing import Any

import numpy as np

from bench.common import median_us
from widen.model.neighbours import normalise_rows, top_k_for_vector
from widen.model.store import Store

__all__ = ["bench_expansion"]


def _each_once(lexicon: Any, cache: Any, queries: list[str], cold: bool) -> list[float]:
    from widen.decisions.decision import DecisionSet
    from widen.expansion.expand import expand

    none, options, times = DecisionSet(), lexicon.options, []
    for q in queries:
        if cold:
            cache.forget_answers()  # nothing kept from earlier queries but the bundle's derived data
        started = time.perf_counter()
        expand(lexicon, none, q, options, cache=cache)
        times.append((time.perf_counter() - started) * 1e6)
    return times


def bench_expansion(store: Path, demo: Path, rounds: int = 3) -> dict[str, Any]:
    """In-process expansion of the log's distinct queries, each once: prepared and cold; composed search."""
    from widen.decisions.decision import DecisionSet
    from widen.expansion.cache import ExpansionCache
    from widen.expansion.expand import expand, prepare
    from widen.expansion.lexicon import Lexicon

    bundle = Store(store).open_bundle()
    probe = Lexicon(bundle)
    probe_cache = ExpansionCache(probe)
    log = [json.loads(line)["q"] for line in (demo / "query_log.jsonl").read_text(encoding="utf-8").splitlines()]
    distinct = list(dict.fromkeys(log))
    by_segments: dict[str, list[str]] = {"known phrase alone": [], "four segments": []}
    for q in distinct:
        segments = expand(probe, DecisionSet(), q, probe.options, cache=probe_cache).segments
        if len(segments) == 1 and segments[0].kind in ("phrase", "term"):
            by_segments["known phrase alone"].append(q)
        elif len(segments) == 4:
            by_segments["four segments"].append(q)
    results: dict[str, Any] = {"distinct_queries": len(distinct)}
    medians: dict[str, dict[str, list[float]]] = {way: {g: [] for g in by_segments} for way in ("prepared", "cold")}
    load: list[float] = []
    for n in range(rounds):
        for way in ("prepared", "cold") if n % 2 == 0 else ("cold", "prepared"):
            lexicon = Lexicon(bundle)
            cache = ExpansionCache(lexicon)
            if way == "prepared":
                started = time.perf_counter()
                prepare(lexicon, cache, lexicon.options)
                load.append(time.perf_counter() - started)
            for group, queries in by_segments.items():
                medians[way][group].append(statistics.median(_each_once(lexicon, cache, queries, way == "cold")))
    for way, groups in medians.items():
        results[way] = {
            g: {"queries": len(by_segments[g]), "median_us": round(statistics.median(v), 1)} for g, v in groups.items()
        }
    results["prepare_s"] = round(statistics.median(load), 2)
    results["entries"] = len(probe.keys)
    rng = np.random.default_rng(0)
    big = normalise_rows(rng.normal(size=(100_000, 100)))
    vectors = normalise_rows(rng.normal(size=(50, 100)))
    counter = iter(range(10**9))
    results["composed_search_100k_median_ms"] = round(
        median_us(lambda: top_k_for_vector(big, vectors[next(counter) % 50], 50), 200) / 1000, 3
    )
    results["targets"] = {"known phrase alone": "<= 50 us (goal 20)", "four segments": "<= 150 us"}
    return results
