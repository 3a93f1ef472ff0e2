"""`widen evaluate`: what expansion does to real search results, on labelled queries.

For every labelled query the front end's two choices are run on the tantivy index: the
baseline (the query's own clauses, as sent today) and the expanded query. Metrics follow
trec_eval's definitions (`widen.evaluation.metrics`).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from widen.decisions import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.metrics import ndcg_at, recall_at, reciprocal_rank, trec_order
from widen.expansion import expand
from widen.lexicon import Lexicon
from widen.options import ExpansionOptions
from widen.query_text import BASELINE_BOOST, baseline_text, merged_text

__all__ = ["LabelledQuery", "evaluate", "read_queries", "RUN_DEPTH"]

RUN_DEPTH = 100


@dataclass(frozen=True)
class LabelledQuery:
    id: str
    query: str
    relevant: dict[str, int]
    family: str


def read_queries(path: Path) -> list[LabelledQuery]:
    queries = []
    with path.open(encoding="utf-8") as fh:
        for number, line in enumerate(fh, start=1):
            if not line.strip():
                continue
            try:
                row = json.loads(line)
                queries.append(
                    LabelledQuery(
                        str(row["id"]),
                        str(row["query"]),
                        {str(k): int(v) for k, v in row["relevant"].items()},
                        str(row.get("family", "")),
                    )
                )
            except (ValueError, KeyError, TypeError, AttributeError) as exc:
                raise ValueError(f"{path}:{number}: not a labelled query ({exc})") from exc
    if not queries:
        raise ValueError(f"{path}: no labelled queries")
    return queries


def evaluate(
    lexicon: Lexicon,
    decisions: DecisionSet,
    index: SearchIndex,
    queries: list[LabelledQuery],
    options: ExpansionOptions,
    ks: Sequence[int] = (10, 100),
    baseline_boost: float = BASELINE_BOOST,
) -> dict[str, Any]:
    """Run baseline and expanded for every query; metrics, per family, the worst ten, and the runs.

    Expanded is `merged_text(baseline, query_text, baseline_boost)`: with the default boost the
    postings that match the seeker's words come first and the expansions fill in after them.
    """
    runs: dict[str, dict[str, dict[str, float]]] = {"baseline": {}, "expanded": {}}
    rows = []
    for q in queries:
        result = expand(lexicon, decisions, q.query, options)
        plain = baseline_text(result, options.operator)
        base_hits = {h.id: h.score for h in index.search(plain, RUN_DEPTH)}
        matches_original = index.matching(plain)
        expanded_text = merged_text(plain, result.query_text, baseline_boost)
        exp_hits = {h.id: h.score for h in index.search(expanded_text, RUN_DEPTH)}
        runs["baseline"][q.id] = base_hits
        runs["expanded"][q.id] = exp_hits
        base_rank, exp_rank = trec_order(base_hits), trec_order(exp_hits)
        # Exact first: every retrieved posting that matches the seeker's own words ranks above
        # every posting that only an expansion brought in.
        exact = [i for i, d in enumerate(exp_rank) if d in matches_original]
        brought = [i for i, d in enumerate(exp_rank) if d not in matches_original]
        exact_first = not exact or not brought or max(exact) < min(brought)
        row: dict[str, Any] = {"id": q.id, "query": q.query, "family": q.family, "exact_first": exact_first}
        for name, ranked in (("baseline", base_rank), ("expanded", exp_rank)):
            metrics = {f"recall@{k}": recall_at(ranked, q.relevant, k) for k in ks}
            metrics["ndcg@10"] = ndcg_at(ranked, q.relevant, 10)
            metrics["mrr"] = reciprocal_rank(ranked, q.relevant)
            row[name] = metrics
        row["recall_curve"] = {
            name: [recall_at(r, q.relevant, k) for k in range(1, RUN_DEPTH + 1)]
            for name, r in (("baseline", base_rank), ("expanded", exp_rank))
        }
        rows.append(row)
    n = len(rows)

    def mean(name: str, metric: str, subset: list[dict[str, Any]] | None = None) -> float:
        chosen = rows if subset is None else subset
        return round(sum(r[name][metric] for r in chosen) / len(chosen), 6) if chosen else 0.0

    metric_names = [f"recall@{k}" for k in ks] + ["ndcg@10", "mrr"]
    summary: dict[str, Any] = {}
    for name in ("baseline", "expanded"):
        summary[name] = {m: mean(name, m) for m in metric_names}
    summary["baseline"]["exact_first"] = 1.0
    summary["expanded"]["exact_first"] = round(sum(r["exact_first"] for r in rows) / n, 6)
    families: dict[str, list[dict[str, Any]]] = {}
    for r in rows:
        families.setdefault(r["family"], []).append(r)
    per_family = {
        f: {name: {m: mean(name, m, members) for m in metric_names} for name in ("baseline", "expanded")}
        for f, members in sorted(families.items())
    }
    worst = sorted(rows, key=lambda r: r["expanded"]["ndcg@10"] - r["baseline"]["ndcg@10"])[:10]
    curve = {
        name: [round(sum(r["recall_curve"][name][k] for r in rows) / n, 6) for k in range(RUN_DEPTH)]
        for name in ("baseline", "expanded")
    }
    return {
        **summary,
        "queries": n,
        "baseline_boost": baseline_boost,
        "per_family": per_family,
        "worst": [
            {
                "id": r["id"],
                "query": r["query"],
                "ndcg@10": {
                    "baseline": round(r["baseline"]["ndcg@10"], 6),
                    "expanded": round(r["expanded"]["ndcg@10"], 6),
                },
            }
            for r in worst
        ],
        "recall_curve": curve,
        "_runs": runs,
        "_qrels": {q.id: q.relevant for q in queries},
        "_rows": rows,
    }
