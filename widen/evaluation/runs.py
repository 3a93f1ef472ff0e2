"""`widen evaluate`: what expansion does to real search results, on labelled queries.

Every method of `widen.evaluation.methods` runs every labelled query on the same tantivy index;
metrics follow trec_eval's definitions (`widen.evaluation.metrics`). Relevance counts only the
postings the index holds, and a query with no relevant posting there is left out (and counted).
Exact-first is computed for every method: the share of queries where every retrieved posting
that matches the seeker's own words (all of its segments as phrases) ranks above every posting
that does not.
"""

from __future__ import annotations

import json
import statistics
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from widen.decisions.decision import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.methods import CONCEPT_METHODS, METHODS, CuratedList, method_queries
from widen.evaluation.metrics import ndcg_at, recall_at, reciprocal_rank, trec_order
from widen.evaluation.rm3 import RM3
from widen.evaluation.significance import paired_randomisation
from widen.expansion.cache import ExpansionCache
from widen.expansion.expand import expand
from widen.expansion.lexicon import Lexicon
from widen.expansion.options import ExpansionOptions

__all__ = ["LabelledQuery", "evaluate", "read_queries", "RUN_DEPTH", "KINDS", "BANDS", "PARTS"]

RUN_DEPTH = 100
#: The kinds of seeker query, and the methods whose figures are broken down by kind.
KINDS = ("title", "town", "noise", "shift", "typo")
#: Frequency bands of a query's title in the dump (head, torso, tail), where the queries say.
BANDS = ("head", "torso", "tail")
#: The parts of a board thresholds were chosen on (`tune`) and figures are reported on (`report`).
PARTS = ("tune", "report")
BASELINE = "bag_of_words"


@dataclass(frozen=True)
class LabelledQuery:
    id: str
    query: str
    relevant: dict[str, int]
    family: str
    kind: str = "title"
    base: str | None = None
    extra: dict[str, Any] = field(default_factory=dict)


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
                        str(row.get("kind") or "title"),
                        str(row["base"]) if row.get("base") else None,
                        {k: row[k] for k in ("town", "pattern", "title", "band", "part", "group") if row.get(k)},
                    )
                )
            except (ValueError, KeyError, TypeError, AttributeError) as exc:
                raise ValueError(f"{path}:{number}: not a labelled query ({exc})") from exc
    if not queries:
        raise ValueError(f"{path}: no labelled queries")
    return queries


def _exact_first(ranked: Sequence[str], exact: set[str]) -> bool:
    """Every retrieved posting that matches the seeker's words ranks above every one that does not."""
    first_other = next((i for i, d in enumerate(ranked) if d not in exact), len(ranked))
    return all(d not in exact for d in ranked[first_other:])


def _mean(values: Sequence[float]) -> float:
    return round(statistics.fmean(values), 6) if values else 0.0


def evaluate(
    lexicon: Lexicon,
    decisions: DecisionSet,
    index: SearchIndex,
    queries: list[LabelledQuery],
    options: ExpansionOptions,
    ks: Sequence[int] = (10, 100),
    truth: dict[str, Any] | None = None,
    rm3: RM3 | None = None,
    methods: Sequence[str] | None = None,
    places: str = "field",
) -> dict[str, Any]:
    """Run every method for every judged query: means, per kind, per family, significance, and the runs.

    widen's query names places in the index's own fields (`places = "field"`): the index has them."""
    options = options.with_request(places=places)
    # An index tagged by this bundle, or by an earlier one of the same lineage (last night's index).
    lineage = lexicon.concept_lineage
    tagged = lineage is not None and (index.tagged_by == lexicon.version or index.tagged_lineage == lineage)
    chosen = [
        m
        for m in (methods or METHODS)
        if (m != "curated" or truth is not None) and (m not in CONCEPT_METHODS or tagged)
    ]
    curated = CuratedList(truth) if truth is not None else None
    names = [f"recall@{k}" for k in ks] + ["ndcg@10", "mrr", "exact_first"]
    runs, qrels, rows = _run(lexicon, decisions, index, queries, options, ks, curated, rm3 or RM3(), chosen)

    def summary(subset: Sequence[dict[str, Any]]) -> dict[str, dict[str, float]]:
        return {m: {n: _mean([r[m][n] for r in subset]) for n in names} for m in chosen}

    families: dict[str, list[dict[str, Any]]] = {}
    for r in rows:
        families.setdefault(r["family"], []).append(r)
    return {
        "methods": summary(rows),
        "descriptions": {m: METHODS[m] for m in chosen},
        "queries": len(rows),
        "left_out": len(queries) - len(rows),
        "index_postings": index.size,
        "significance": {
            "against": BASELINE,
            "test": "paired randomisation, two-sided",
            "p": _significance(rows, chosen),
        },
        "kinds": _by_kind(rows, chosen, summary),
        "bands": _by(rows, "band", BANDS, summary),
        "parts": {
            part: {"queries": len(members), "methods": summary(members), "bands": _by(members, "band", BANDS, summary)}
            for part in PARTS
            if (members := [r for r in rows if r.get("part") == part])
        },
        "per_family": {f: summary(members) for f, members in sorted(families.items())},
        "worst": _worst(rows, chosen),
        "recall_curve": {m: [_mean([r["recall_curve"][m][i] for r in rows]) for i in range(4)] for m in chosen},
        "_runs": runs,
        "_qrels": qrels,
        "_rows": rows,
    }


def _run(
    lexicon: Lexicon,
    decisions: DecisionSet,
    index: SearchIndex,
    queries: list[LabelledQuery],
    options: ExpansionOptions,
    ks: Sequence[int],
    curated: CuratedList | None,
    feedback: RM3,
    chosen: Sequence[str],
) -> tuple[dict[str, dict[str, dict[str, float]]], dict[str, dict[str, int]], list[dict[str, Any]]]:
    """Every method's run of every judged query, the judgements, and one row of scores a query."""
    cache = ExpansionCache(lexicon)
    indexed = index.ids
    wanted = any(m in CONCEPT_METHODS for m in chosen)
    with_concepts = options.with_request(concepts=True) if wanted else None
    runs: dict[str, dict[str, dict[str, float]]] = {m: {} for m in chosen}
    qrels: dict[str, dict[str, int]] = {}
    rows: list[dict[str, Any]] = []
    for q in queries:
        relevant = {d: g for d, g in q.relevant.items() if d in indexed}
        if not any(g >= 1 for g in relevant.values()):
            continue
        qrels[q.id] = relevant
        result = expand(lexicon, decisions, q.query, options, cache=cache)
        conceptual = expand(lexicon, decisions, q.query, with_concepts, cache=cache) if with_concepts else None
        built, exact_text = method_queries(
            index, q.query, result, options, feedback, curated, chosen, lexicon.names, conceptual
        )
        exact = index.matching(exact_text) if exact_text else set()
        row: dict[str, Any] = {"id": q.id, "query": q.query, "family": q.family, "kind": q.kind, "base": q.base}
        row.update({k: q.extra[k] for k in ("band", "part") if k in q.extra})
        for method in chosen:
            query = built.get(method)
            hits = dict(index.run(query, RUN_DEPTH)) if query is not None else {}
            runs[method][q.id] = hits
            ranked = trec_order(hits)
            scores = {f"recall@{k}": recall_at(ranked, relevant, k) for k in ks}
            scores["ndcg@10"] = ndcg_at(ranked, relevant, 10)
            scores["mrr"] = reciprocal_rank(ranked, relevant)
            scores["exact_first"] = float(_exact_first(ranked, exact))
            row[method] = scores
        row["recall_curve"] = {
            m: [recall_at(trec_order(runs[m][q.id]), relevant, k) for k in (10, 25, 50, 100)] for m in chosen
        }
        rows.append(row)
    return runs, qrels, rows


def _by_kind(
    rows: list[dict[str, Any]], chosen: Sequence[str], summary: Callable[[Sequence[dict[str, Any]]], Any]
) -> dict[str, Any]:
    """The means by kind of query, and each kind against the same queries without what makes it that kind."""
    by_id = {r["id"]: r for r in rows}
    kinds: dict[str, Any] = {}
    for kind in KINDS:
        members = [r for r in rows if r["kind"] == kind]
        if not members:
            continue
        entry: dict[str, Any] = {"queries": len(members), "methods": summary(members)}
        paired = [(r, by_id[r["base"]]) for r in members if r["base"] in by_id]
        if paired:
            # The same queries without the noise words / spelled right / without the pattern, side by side.
            entry["base_queries"] = len(paired)
            entry["ratio_to_base"] = {
                m: {
                    n: round(_mean([a[m][n] for a, _ in paired]) / max(_mean([b[m][n] for _, b in paired]), 1e-9), 4)
                    for n in ("recall@100", "ndcg@10")
                }
                for m in chosen
            }
        kinds[kind] = entry
    return kinds


def _by(
    rows: Sequence[dict[str, Any]], key: str, values: Sequence[str], summary: Callable[[Sequence[dict[str, Any]]], Any]
) -> dict[str, Any]:
    """The means of the queries that have each value of `key` (band, part), where any do."""
    out = {}
    for value in values:
        members = [r for r in rows if r.get(key) == value]
        if members:
            out[value] = {"queries": len(members), "methods": summary(members)}
    return out


def _significance(rows: list[dict[str, Any]], chosen: Sequence[str]) -> dict[str, dict[str, float]]:
    return {
        m: {
            n: round(paired_randomisation([r[m][n] for r in rows], [r[BASELINE][n] for r in rows]), 5)
            for n in ("ndcg@10", "recall@100")
        }
        for m in chosen
        if m != BASELINE and BASELINE in chosen
    }


def _worst(rows: list[dict[str, Any]], chosen: Sequence[str]) -> list[dict[str, Any]]:
    """The ten queries where widen's nDCG@10 falls furthest below the bag of words'."""
    compare = "widen" if "widen" in chosen else chosen[0]
    against = BASELINE if BASELINE in chosen else chosen[0]
    worst = sorted(rows, key=lambda r: r[compare]["ndcg@10"] - r[against]["ndcg@10"])[:10]
    return [
        {
            "id": r["id"],
            "query": r["query"],
            "ndcg@10": {against: r[against]["ndcg@10"], compare: r[compare]["ndcg@10"]},
        }
        for r in worst
    ]
