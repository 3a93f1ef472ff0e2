"""`python -m bench.tune`: widen's query on the tune part of the real-vocabulary board under several
sets of expansion options, side by side, figures of the tune part only (the report part is never
looked at here: thresholds are chosen on one part and reported on the other).

    python -m bench.tune --store build/fh/store --data build/fh/data --set max_per_segment=10 ...
"""

from __future__ import annotations

import argparse
import json
import re
from pathlib import Path
from typing import Any

from widen.decisions.decision import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.methods import CONCEPT_METHODS
from widen.evaluation.runs import evaluate, read_queries
from widen.evaluation.scorecard import query_scorecard
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions
from widen.model.store import Store

__all__ = ["main", "tune"]


def _value(text: str) -> Any:
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        return text


def tune(store: Path, data: Path, variants: list[dict[str, Any]], part: str = "tune") -> list[dict[str, Any]]:
    lexicon = Lexicon(Store(store).open_bundle())
    queries = [q for q in read_queries(data / "queries.jsonl") if q.extra.get("part") == part]
    tagger = lexicon if lexicon.concepts is not None else None
    index = SearchIndex(data / "open_postings.jsonl", store / "search-index", tagger=tagger)
    methods = ("bag_of_words", "widen", *(CONCEPT_METHODS if tagger else ()))
    truth = json.loads((data / "truth.json").read_text(encoding="utf-8"))
    rows = []
    for change in variants:
        options = ExpansionOptions.model_validate({**lexicon.options.model_dump(), **change})
        report = evaluate(lexicon, DecisionSet(), index, queries, options, methods=methods)
        row = {"change": change, "queries": report["queries"]}
        for name, block in [("all", report), *report["bands"].items()]:
            m = block["methods"]
            row[name] = {k: [round(m[k][x], 3) for x in ("recall@100", "ndcg@10", "exact_first")] for k in m}
        card = query_scorecard(lexicon, truth, queries, options)
        for name in ("all", "tail"):
            c = card.get(name, {})
            row[f"card {name}"] = [
                round(c.get(k, 0.0), 3) for k in ("precision", "same_job", "coverage", "equivalent_precision")
            ] + [c.get("expanded_queries", 0), c.get("queries", 0)]
        rows.append(row)
        print(json.dumps(row), flush=True)
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--store", type=Path, required=True)
    parser.add_argument("--data", type=Path, required=True)
    parser.add_argument("--set", nargs="*", default=[], help="option=value[,option=value] for each variant")
    args = parser.parse_args()
    variants: list[dict[str, Any]] = [{}]
    for spec in args.set:
        pairs = re.split(r",(?=[a-z_]+=)", spec)  # a value may hold commas: [0.1,0.2]
        variants.append({k: _value(v) for k, v in (pair.split("=", 1) for pair in pairs)})
    tune(args.store, args.data, variants)


if __name__ == "__main__":
    main()
