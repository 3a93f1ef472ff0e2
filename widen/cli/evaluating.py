"""`widen evaluate`: what expansion does to search results, on labelled queries over a tantivy index."""

from __future__ import annotations

import argparse
import json
import os
import sys
from typing import Any

from widen.decisions.open_store import open_decision_store
from widen.errors import EXIT_OK, BadInput
from widen.expansion.lexicon import Lexicon
from widen.model.store import Store

__all__ = ["evaluate"]


def _numbers(text: str, what: str, kind: type = int) -> list[Any]:
    try:
        return [kind(x) for x in text.split(",") if x.strip()]
    except ValueError as exc:
        raise BadInput(f"{what} takes numbers separated by commas, not {text!r}") from exc


def evaluate(args: argparse.Namespace) -> int:
    from widen.evaluation.index import SearchIndex
    from widen.evaluation.report import methods_table, write_report, write_windows
    from widen.evaluation.rm3 import RM3
    from widen.evaluation.runs import evaluate as run_evaluation
    from widen.evaluation.runs import read_queries
    from widen.evaluation.scorecard import query_scorecard

    ks = sorted(set(_numbers(args.k, "--k")))
    if not ks or min(ks) < 1 or max(ks) > 100:
        raise BadInput("--k values must lie in 1..100 (runs are 100 deep)")
    days = sorted(set(_numbers(args.days, "--days"))) if args.days else []
    if any(d < 1 for d in days):
        raise BadInput("--days values must be 1 or more")
    fb = _numbers(args.rm3, "--rm3", float)
    if len(fb) != 3 or fb[0] < 1 or fb[1] < 1 or not 0 <= fb[2] <= 1:
        raise BadInput(
            "--rm3 takes DOCS,TERMS,WEIGHT: feedback postings, terms, and the original query's weight in 0..1"
        )
    rm3 = RM3(int(fb[0]), int(fb[1]), fb[2])
    for path in (args.postings, args.queries, *([args.truth] if args.truth else [])):
        if not path.is_file():
            raise BadInput(f"not found: {path}")
    store = Store(args.store)
    lexicon = Lexicon(store.open_bundle())
    try:
        queries = read_queries(args.queries)
        truth = json.loads(args.truth.read_text(encoding="utf-8")) if args.truth else None
    except ValueError as exc:
        raise BadInput(str(exc)) from exc
    board = (truth or {}).get("board", "")
    decisions = open_decision_store(store, os.environ.get("WIDEN_DECISIONS_URL") or None).snapshot()
    curve = {}
    for window in days or [None]:
        what = f"the last {window} days of {args.postings}" if window else str(args.postings)
        tagged = " with the bundle's concept tokens" if lexicon.concepts is not None else ""
        print(f"indexing {what}{tagged} (reused when unchanged) ...", file=sys.stderr)
        index = SearchIndex(args.postings, store.search_indexes, window, lexicon if tagged else None)
        report = run_evaluation(lexicon, decisions, index, queries, lexicon.options, ks, truth, rm3)
        if truth is not None and any(q.extra.get("part") for q in queries):
            report["title_scorecard"] = query_scorecard(lexicon, truth, queries, lexicon.options)
        if window is None or window == days[0]:
            for path in write_report(report, args.out, lexicon.version, board):
                print(f"wrote {path}")
            print("\n".join(methods_table(report)))
        if window is not None:
            curve[window] = report
    if len(curve) > 1:
        for path in write_windows(curve, args.out, board):
            print(f"wrote {path}")
    return EXIT_OK
