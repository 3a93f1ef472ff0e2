"""The files `widen evaluate` writes: report.json, report.md, TREC run and qrels files, plots."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from widen.evaluation.metrics import trec_order
from widen.evaluation.runs import RUN_DEPTH

__all__ = ["write_report"]


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
        "| family | recall@100 baseline | recall@100 expanded | nDCG@10 baseline | nDCG@10 expanded |",
        "|---|---|---|---|---|",
    ]
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
