"""`widen evaluate`: what expansion does to real search results, on labelled queries.

For every labelled query the front end's two choices are run on the tantivy index: the
baseline (the query's own clauses, as sent today) and the expanded `query_text`. Metrics follow
trec_eval's definitions (relevance = grade >= 1; nDCG with the grade as gain and a log2
discount; ranks by score, ties by document id descending) and are checked against trec_eval
itself (pytrec-eval-terrier) in the tests.
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from service.decisions import DecisionSet
from service.expansion import ExpansionOptions, Lexicon, expand, render_query_text
from service.result import ExpansionResult
from service.search_index import SearchIndex

__all__ = [
    "BASELINE_BOOST",
    "LabelledQuery",
    "evaluate",
    "merged_text",
    "ndcg_at",
    "read_queries",
    "recall_at",
    "reciprocal_rank",
    "write_report",
]

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


def trec_order(run: dict[str, float]) -> list[str]:
    """Documents as trec_eval ranks them: score descending, ties by document id descending."""
    return sorted(run, key=lambda d: (run[d], d), reverse=True)


def recall_at(ranked: Sequence[str], relevant: dict[str, int], k: int) -> float:
    wanted = {d for d, g in relevant.items() if g >= 1}
    return len(wanted & set(ranked[:k])) / len(wanted) if wanted else 0.0


def ndcg_at(ranked: Sequence[str], relevant: dict[str, int], k: int) -> float:
    gains = sorted((g for g in relevant.values() if g > 0), reverse=True)[:k]
    ideal = sum(g / math.log2(i + 2) for i, g in enumerate(gains))
    got = sum(relevant.get(d, 0) / math.log2(i + 2) for i, d in enumerate(ranked[:k]))
    return got / ideal if ideal else 0.0


def reciprocal_rank(ranked: Sequence[str], relevant: dict[str, int]) -> float:
    for i, d in enumerate(ranked):
        if relevant.get(d, 0) >= 1:
            return 1.0 / (i + 1)
    return 0.0


def baseline_text(result: ExpansionResult, options: ExpansionOptions) -> str:
    originals = [c for c in result.clauses if c.original]
    return render_query_text(originals, len(result.segments), options.operator)


#: How a front end keeps the seeker's exact matches first: the baseline query, boosted this much,
#: OR the service's query_text. 0 sends query_text as it is.
BASELINE_BOOST = 10.0


def merged_text(baseline_text: str, query_text: str, baseline_boost: float) -> str:
    """The expanded query a front end sends: `(baseline)^B OR (query_text)`, or query_text alone."""
    if baseline_boost <= 0 or not baseline_text:
        return query_text
    return f"({baseline_text})^{baseline_boost:g} OR ({query_text})"


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
        plain = baseline_text(result, options)
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


def write_report(report: dict[str, Any], out: Path, model_version: str) -> list[Path]:
    """report.json, report.md, qrels.txt, baseline.run, expanded.run and two PNG plots."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out.mkdir(parents=True, exist_ok=True)
    written = []
    runs, qrels = report["_runs"], report["_qrels"]
    public = {k: v for k, v in report.items() if not k.startswith("_")}
    public["model"] = model_version
    (out / "report.json").write_text(json.dumps(public, indent=2) + "\n", encoding="utf-8")
    with (out / "qrels.txt").open("w", encoding="utf-8") as fh:
        for qid, rel in qrels.items():
            for doc, grade in sorted(rel.items()):
                fh.write(f"{qid} 0 {doc} {grade}\n")
    for name, run in runs.items():
        with (out / f"{name}.run").open("w", encoding="utf-8") as fh:
            for qid, docs in run.items():
                for rank, doc in enumerate(trec_order(docs), start=1):
                    fh.write(f"{qid} Q0 {doc} {rank} {docs[doc]:.6f} widen-{name}\n")
    written += [out / "report.json", out / "qrels.txt", out / "baseline.run", out / "expanded.run"]

    ks = range(1, RUN_DEPTH + 1)
    fig, ax = plt.subplots(figsize=(7, 4.2))
    ax.plot(ks, report["recall_curve"]["baseline"], label="baseline (seeker's words only)", color="#7a7a7a")
    ax.plot(ks, report["recall_curve"]["expanded"], label="expanded (widen)", color="#1f6f8b", linewidth=2)
    ax.set_xlabel("k (postings retrieved)")
    ax.set_ylabel("mean recall@k")
    top = max(max(report["recall_curve"]["baseline"]), max(report["recall_curve"]["expanded"]), 0.01)
    ax.set_ylim(0, top * 1.15)
    ax.set_title("Recall@k on the labelled queries")
    ax.grid(alpha=0.3)
    ax.legend(loc="lower right")
    fig.tight_layout()
    fig.savefig(out / "recall_at_k.png", dpi=110)
    plt.close(fig)

    families = list(report["per_family"])
    gains = [
        report["per_family"][f]["expanded"]["recall@100"] - report["per_family"][f]["baseline"]["recall@100"]
        for f in families
    ]
    fig, ax = plt.subplots(figsize=(7, max(4, 0.24 * len(families))))
    ax.barh(families, gains, color=["#1f6f8b" if g >= 0 else "#b5482f" for g in gains])
    ax.set_xlabel("recall@100 gain (expanded - baseline)")
    ax.set_title("Recall gain per job family")
    ax.invert_yaxis()
    ax.grid(axis="x", alpha=0.3)
    fig.tight_layout()
    fig.savefig(out / "recall_gain_per_family.png", dpi=110)
    plt.close(fig)
    written += [out / "recall_at_k.png", out / "recall_gain_per_family.png"]

    lines = [
        f"# Search impact of widen (bundle {model_version})",
        "",
        f"{report['queries']} labelled queries, tantivy BM25 (title weighted above description). "
        f"Expanded query: (baseline)^{report['baseline_boost']:g} OR (query_text)"
        if report["baseline_boost"]
        else f"{report['queries']} labelled queries, tantivy BM25; expanded query: query_text as it is.",
        "",
        "| metric | baseline | expanded |",
        "|---|---|---|",
    ]
    for metric in report["baseline"]:
        lines.append(f"| {metric} | {report['baseline'][metric]:.4f} | {report['expanded'][metric]:.4f} |")
    lines += [
        "",
        "## Per family (recall@100, nDCG@10)",
        "",
        "| family | recall@100 | | nDCG@10 | |",
        "|---|---|---|---|---|",
    ]
    lines[-1] = "|---|---|---|---|---|"
    lines[-2] = "| family | recall@100 baseline | recall@100 expanded | nDCG@10 baseline | nDCG@10 expanded |"
    for f, v in report["per_family"].items():
        b, e = v["baseline"], v["expanded"]
        lines.append(
            f"| {f} | {b['recall@100']:.3f} | {e['recall@100']:.3f} | {b['ndcg@10']:.3f} | {e['ndcg@10']:.3f} |"
        )
    lines += ["", "## The ten queries that lost most nDCG@10", ""]
    losses = [w["ndcg@10"]["expanded"] - w["ndcg@10"]["baseline"] for w in report["worst"]]
    if all(loss >= 0 for loss in losses):
        lines += ["No query lost nDCG@10 with expansion; these changed least.", ""]
    lines += ["| query | baseline | expanded | change |", "|---|---|---|---|"]
    for w, loss in zip(report["worst"], losses, strict=True):
        b, e = w["ndcg@10"]["baseline"], w["ndcg@10"]["expanded"]
        lines.append(f"| {w['query']} | {b:.3f} | {e:.3f} | {loss:+.3f} |")
    lines += ["", "![recall@k](recall_at_k.png)", "", "![recall gain per family](recall_gain_per_family.png)", ""]
    (out / "report.md").write_text("\n".join(lines), encoding="utf-8")
    written.append(out / "report.md")
    return written
