"""`python -m bench.worklist`: the reviewer's worklist at the full demo board's size.

The demo board (20,000 postings, seed 7) trained, then the next day's dump (the generator with seed 8)
trained into the same store, as the nightly job does; the worklist of the second bundle against the
first from the first day's query log: the time to build it (a fresh process's caches, as the service
has them right after a swap, and the service's prepared caches), its counts, the share of the day's
searches the top 50 items carry, and the check the issue asks for (every logged phrase whose served
expansions differ is listed).

    python -m bench.worklist --out build/worklist
"""

from __future__ import annotations

import argparse
import io
import json
import time
from pathlib import Path
from typing import Any

from bench.common import machine
from demo_postings.generate import generate
from tests.helpers import open_store
from training.config import load_config
from training.pipeline import train
from widen.decisions.decision import DecisionSet
from widen.expansion.expand import expand, prepare
from widen.expansion.query_text import JOBS
from widen.model.store import Store
from widen.text.forms import phrase_of_text
from widen.worklist.build import Bundle, Limits, build_worklist, served
from widen.worklist.querylog import read_query_log

__all__ = ["main"]


def _store(out: Path, postings: int) -> tuple[Path, Path]:
    days = [out / "day-one", out / "day-two"]
    store = out / "store"
    if len(Store(store).versions()) >= 2:
        return store, days[0]
    for seed, folder in zip((7, 8), days, strict=True):
        if not (folder / "postings.jsonl").is_file():
            generate(folder, postings, seed=seed)
        config = load_config(Path("demo_postings/widen.toml"), {"gate.pairs": str(folder / "pairs.tsv")})
        train(folder / "postings.jsonl", store, config, force=True, out=io.StringIO())
    return store, days[0]


def _complete(now: Bundle, before: Bundle, log_queries: list[str], changed: set[str]) -> dict[str, int]:
    """Every logged job phrase whose served expansions differ between the bundles: listed or not."""
    options, margin, none = now.lexicon.options, Limits().weight_moved, DecisionSet()
    phrases: set[str] = set()
    for q in log_queries:
        result = expand(now.lexicon, none, q, options, cache=now.cache)
        phrases |= {phrase_of_text(s.text) for s in result.segments if s.kind in JOBS}
    differ = set()
    for p in phrases:
        a, b = served(now, none, p, options), served(before, none, p, options)
        moved = any(a[n].relation != b[n].relation or abs(a[n].weight - b[n].weight) > margin for n in set(a) & set(b))
        if set(a) != set(b) or moved:
            differ.add(p)
    return {
        "phrases": len(phrases),
        "differ": len(differ),
        "listed": len(differ & changed),
        "missed": len(differ - changed),
    }


def measure(out: Path, postings: int) -> dict[str, Any]:
    store, day = _store(out, postings)
    log = read_query_log(day / "query_log.jsonl")
    versions = Store(store).versions()[-2:]
    results: dict[str, Any] = {"postings": postings, "distinct_queries": len(log.searches)}
    for label, prepared in (("fresh", False), ("prepared", True)):
        opened = [open_store(store, v) for v in reversed(versions)]
        bundles = [Bundle(o.lexicon, o.cache) for o in opened]
        if prepared:
            for b in bundles:
                prepare(b.lexicon, b.cache, b.lexicon.options, 20_000)
        started = time.perf_counter()
        listed = build_worklist(bundles[0], bundles[1], [], log, bundles[0].lexicon.options)
        results[f"build_s_{label}"] = round(time.perf_counter() - started, 2)
    results.update(
        items=len(listed.items),
        counts=listed.counts(),
        top_50_coverage=round(listed.coverage(listed.items[:50]), 4),
        summary=listed.summary(),
    )
    changed = {i.phrase for i in listed.items if "changed" in i.reasons}
    results["completeness"] = _complete(bundles[0], bundles[1], list(log.searches), changed)
    return results


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=Path("build/worklist"))
    parser.add_argument("--postings", type=int, default=20_000)
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    results = {"machine": machine(), "date": time.strftime("%Y-%m-%d"), **measure(args.out.resolve(), args.postings)}
    (args.out / "worklist.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    print(json.dumps(results, indent=2))


if __name__ == "__main__":
    main()
