"""`widen expand` and `widen evaluate`: what a query becomes, and what that does to search results."""

from __future__ import annotations

import argparse
import sys

from pydantic import ValidationError

from widen.cli.tables import render_expansion, table
from widen.decision_stores import open_decision_store
from widen.errors import EXIT_OK, BadInput
from widen.expansion import expand as expand_query
from widen.lexicon import Lexicon
from widen.store import Store

__all__ = ["expand", "evaluate"]


def expand(args: argparse.Namespace) -> int:
    store = Store(args.store)
    lexicon = Lexicon(store.open_bundle(args.bundle))
    try:
        options = lexicon.options.with_request(
            max=args.max, min_similarity=args.min_similarity, strict=True if args.strict else None
        )
    except ValidationError as exc:
        raise BadInput(str(exc.errors()[0]["msg"]) + f" ({exc.errors()[0]['loc'][0]})") from exc
    decisions = open_decision_store(store).snapshot()
    result = expand_query(lexicon, decisions, args.query, options, explain=args.explain)
    if args.json:
        print(result.model_dump_json(indent=2, exclude_none=True))
        return EXIT_OK
    print(render_expansion(result))
    return EXIT_OK


def evaluate(args: argparse.Namespace) -> int:
    from widen.evaluation.index import SearchIndex
    from widen.evaluation.report import write_report
    from widen.evaluation.runs import evaluate as run_evaluation
    from widen.evaluation.runs import read_queries

    try:
        ks = sorted({int(k) for k in args.k.split(",") if k.strip()})
    except ValueError as exc:
        raise BadInput(f"--k takes whole numbers separated by commas, not {args.k!r}") from exc
    if not ks or min(ks) < 1 or max(ks) > 100:
        raise BadInput("--k values must lie in 1..100 (runs are 100 deep)")
    for path in (args.postings, args.queries):
        if not path.is_file():
            raise BadInput(f"not found: {path}")
    if args.baseline_boost < 0:
        raise BadInput("--baseline-boost must be 0 or more")
    store = Store(args.store)
    lexicon = Lexicon(store.open_bundle())
    try:
        queries = read_queries(args.queries)
    except ValueError as exc:
        raise BadInput(str(exc)) from exc
    print(f"indexing {args.postings} (reused when the dump is unchanged) ...", file=sys.stderr)
    index = SearchIndex(args.postings, store.search_indexes)
    decisions = open_decision_store(store).snapshot()
    report = run_evaluation(lexicon, decisions, index, queries, lexicon.options, ks, args.baseline_boost)
    for path in write_report(report, args.out, lexicon.version):
        print(f"wrote {path}")
    rows = [("metric", "baseline", "expanded")]
    rows += [(m, f"{report['baseline'][m]:.4f}", f"{report['expanded'][m]:.4f}") for m in report["baseline"]]
    print(table(rows))
    return EXIT_OK
