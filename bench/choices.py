"""`make choices`: how widen builds the query a front end sends, and what each choice is worth.

Issue 12 asked which segments a query requires, which only score and which it drops, decided by
measurement. This runs every labelled query of both demo boards (full size, as `make evaluate`
builds them) through several ways of building the query from the same expansions, on the same
tantivy index, and reports recall@100, nDCG@10 and exact-first for each, overall and for the
kinds of query each choice is about. The default (`all_field` where the index has the place
field, `all_text` where it has not) was chosen on Tollbridge Valley; Oxmere Bay is where it is
reported. Exact-first is measured the one way `widen evaluate` does:
postings that match every word the seeker typed, as phrases, rank above all others.

    python -m bench.choices --out build/choices [--postings 20000] [--seed 7]
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

from bench.boards import prepare
from bench.common import ROOT, machine
from demo_postings.generate import BOARDS
from widen.decisions.decision import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.methods import bag_of_words_text
from widen.evaluation.metrics import ndcg_at, recall_at, trec_order
from widen.evaluation.runs import RUN_DEPTH, LabelledQuery, read_queries
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.expansion.query_text import baseline_text, merged_text, words_text
from widen.expansion.result import ExpansionResult
from widen.model.store import Store

__all__ = ["main", "CHOICES"]

Build = Callable[[Lexicon, str], str]


#: What is kept of each bundle between queries (one board's bundle at a time, in this run).
_CACHES: dict[str, ExpansionCache] = {}


def _expand(lex: Lexicon, query: str, options: ExpansionOptions) -> ExpansionResult:
    cache = _CACHES.get(lex.version)
    if cache is None:
        cache = _CACHES[lex.version] = ExpansionCache(lex)
    return expand(lex, DecisionSet(), query, options, cache=cache)


def _full(places: str, match: str) -> Build:
    def build(lex: Lexicon, query: str) -> str:
        return _expand(lex, query, lex.options.with_request(places=places, match=match)).full_query

    return build


def _parts(lex: Lexicon, query: str, match: str = "all") -> ExpansionResult:
    return _expand(lex, query, lex.options.with_request(places="field", match=match))


def _no_words(lex: Lexicon, query: str) -> str:
    r = _parts(lex, query)
    return merged_text(baseline_text(r), r.query_text)


def _baseline_without_noise(lex: Lexicon, query: str) -> str:
    r = _parts(lex, query)
    named = r.model_copy(update={"segments": [s for s in r.segments if s.kind != "noise"]})
    return merged_text(baseline_text(named), r.query_text, words=words_text(r))


def _alone(match: str) -> Build:
    def build(lex: Lexicon, query: str) -> str:
        return _parts(lex, query, match).query_text

    return build


def _added_to_words(match: str) -> Build:
    def build(lex: Lexicon, query: str) -> str:
        return merged_text(bag_of_words_text(query), _parts(lex, query, match).query_text)

    return build


def _bag_of_words(lex: Lexicon, query: str) -> str:
    return bag_of_words_text(query)


#: Each way of building the query, with what it is.
CHOICES: dict[str, tuple[str, Build]] = {
    "bag_of_words": ("the engine's default: the words as optional terms (the comparison)", _bag_of_words),
    "all_field": ("full_query, match all (the default), places in their field", _full("field", "all")),
    "all_text": ("full_query, match all, places in the free text (the default places)", _full("text", "all")),
    "job_field": ("full_query, only the job required, places in their field", _full("field", "job")),
    "job_text": ("full_query, only the job required, places in the free text", _full("text", "job")),
    "no_words": ("all_field without the seeker's words as optional terms at 0.1", _no_words),
    "baseline_without_noise": (
        "all_field with its boosted exact half left without noise words",
        _baseline_without_noise,
    ),
    "query_text_alone": ("query_text as it is (match all, places in their field), no exact half", _alone("all")),
    "query_text_alone_job": ("the same, only the job required", _alone("job")),
    "added_to_words": ("(bag of words)^10 OR (query_text): a front end keeping its own query", _added_to_words("all")),
    "added_to_words_job": ("the same, only the job required", _added_to_words("job")),
}


def _score(lex: Lexicon, index: SearchIndex, queries: list[LabelledQuery]) -> dict[str, dict[str, dict[str, float]]]:
    indexed = index.ids
    per: dict[str, dict[str, list[float]]] = {}
    for q in queries:
        relevant = {d: g for d, g in q.relevant.items() if d in indexed}
        if not any(g >= 1 for g in relevant.values()):
            continue
        exact_text = baseline_text(_parts(lex, q.query))
        exact = index.matching(exact_text) if exact_text else set()
        for name, (_, build) in CHOICES.items():
            text = build(lex, q.query)
            ranked = trec_order(dict(index.run(index.parse(text), RUN_DEPTH))) if text.strip() else []
            first_other = next((i for i, d in enumerate(ranked) if d not in exact), len(ranked))
            values = {
                "recall@100": recall_at(ranked, relevant, 100),
                "ndcg@10": ndcg_at(ranked, relevant, 10),
                "exact_first": float(all(d not in exact for d in ranked[first_other:])),
                "empty": float(not ranked),
            }
            for group in ("all", q.kind):
                bucket = per.setdefault(f"{group}|{name}", {})
                for metric, v in values.items():
                    bucket.setdefault(metric, []).append(v)
    out: dict[str, dict[str, dict[str, float]]] = {}
    for key, metrics in per.items():
        group, name = key.split("|")
        out.setdefault(group, {})[name] = {m: round(statistics.fmean(v), 3) for m, v in metrics.items()}
        out[group][name]["queries"] = len(next(iter(metrics.values())))
    return out


def _table(results: dict[str, Any]) -> str:
    lines = []
    for name, board in results["boards"].items():
        lines.append(f"\n### {BOARDS[name].name}\n")
        groups = [g for g in ("all", "title", "town", "noise", "shift", "typo") if g in board]
        head = " | ".join(f"{g} ({board[g]['bag_of_words']['queries']:.0f})" for g in groups)
        lines.append(f"| query built as | {head} | no result |")
        lines.append("|---|" + "---|" * (len(groups) + 1))
        for choice in CHOICES:
            cells = ["{recall@100:.3f} / {ndcg@10:.3f} / {exact_first:.2f}".format(**board[g][choice]) for g in groups]
            lines.append(f"| {choice} | " + " | ".join(cells) + f" | {board['all'][choice]['empty']:.3f} |")
        lines.append("\nEach cell: recall@100 / nDCG@10 / exact-first; in brackets, the number of queries.")
    return "\n".join(lines) + "\n"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", type=Path, default=ROOT / "build" / "choices")
    parser.add_argument("--postings", type=int, default=20000)
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    out = args.out.resolve()
    results: dict[str, Any] = {
        "machine": machine(),
        "date": time.strftime("%Y-%m-%d"),
        "choices": {k: v[0] for k, v in CHOICES.items()},
        "boards": {},
    }
    for name in ("tollbridge", "oxmere"):
        print(f"{name} ...", file=sys.stderr, flush=True)
        data, store, _ = prepare(name, out, args.postings, args.seed)
        lex = Lexicon(Store(store).open_bundle())
        index = SearchIndex(data / "open_postings.jsonl", out / name / "index")
        results["boards"][name] = _score(lex, index, read_queries(data / "queries.jsonl"))
    (out / "choices.json").write_text(json.dumps(results, indent=2) + "\n", encoding="utf-8")
    table = _table(results)
    (out / "choices.md").write_text(table, encoding="utf-8")
    print(table)


if __name__ == "__main__":
    main()
