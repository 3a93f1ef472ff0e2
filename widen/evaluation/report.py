"""The files `widen evaluate` writes: report.json, report.md, TREC run and qrels files, plots."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from widen.evaluation.metrics import trec_order

__all__ = ["write_report", "write_windows", "methods_table"]

_SHOWN = ("bag_of_words", "rm3", "widen", "bag_of_words_widen", "widen_concepts")
_CUTS = (10, 25, 50, 100)


def _plt() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def methods_table(report: dict[str, Any]) -> list[str]:
    """The Markdown table of every method: recall@10/100, nDCG@10, MRR, exact-first, p against the bag of words."""
    p = report["significance"]["p"]

    def shown(value: float) -> str:
        return "< 0.001" if value < 0.001 else f"{value:.3g}"

    lines = [
        "| method | recall@10 | recall@100 | nDCG@10 | MRR | exact-first | p (nDCG@10, recall@100) vs bag of words |",
        "|---|---|---|---|---|---|---|",
    ]
    for m, v in report["methods"].items():
        sig = f"{shown(p[m]['ndcg@10'])}, {shown(p[m]['recall@100'])}" if m in p else "(the baseline)"
        lines.append(
            f"| {m}: {report['descriptions'][m]} | {v['recall@10']:.3f} | {v['recall@100']:.3f} | {v['ndcg@10']:.3f}"
            f" | {v['mrr']:.3f} | {v['exact_first']:.2f} | {sig} |"
        )
    return lines


def _kinds_table(report: dict[str, Any]) -> list[str]:
    shown = [m for m in _SHOWN if m in report["methods"]]
    head = " | ".join(f"{m} recall@100 / nDCG@10 / exact-first" for m in shown)
    lines = [
        f"| kind (queries) | {head} | widen recall@100 against the same queries' base |",
        "|---" * (len(shown) + 2) + "|",
    ]
    for kind, entry in report["kinds"].items():
        cells = []
        for m in shown:
            v = entry["methods"][m]
            cells.append(f"{v['recall@100']:.3f} / {v['ndcg@10']:.3f} / {v['exact_first']:.2f}")
        ratio = entry.get("ratio_to_base", {}).get("widen", {}).get("recall@100")
        lines.append(
            f"| {kind} ({entry['queries']}) | {' | '.join(cells)} | {'' if ratio is None else f'{ratio:.2f}'} |"
        )
    return lines


def write_report(report: dict[str, Any], out: Path, model_version: str, board: str = "") -> list[Path]:
    """report.json, report.md, qrels.txt, a TREC run file per method and two PNG plots."""
    out.mkdir(parents=True, exist_ok=True)
    public = {k: v for k, v in report.items() if not k.startswith("_")}
    public["model"] = model_version
    public["board"] = board
    (out / "report.json").write_text(json.dumps(public, indent=2) + "\n", encoding="utf-8")
    written = [out / "report.json", *_trec_files(report, out)]
    written += _plots(report, out, board)
    (out / "report.md").write_text("\n".join(_markdown(report, model_version, board)), encoding="utf-8")
    written.append(out / "report.md")
    return written


def _trec_files(report: dict[str, Any], out: Path) -> list[Path]:
    """The judgements and every method's run, in trec_eval's formats."""
    with (out / "qrels.txt").open("w", encoding="utf-8") as fh:
        for qid, rel in report["_qrels"].items():
            for doc, grade in sorted(rel.items()):
                fh.write(f"{qid} 0 {doc} {grade}\n")
    written = [out / "qrels.txt"]
    for name, run in report["_runs"].items():
        with (out / f"{name}.run").open("w", encoding="utf-8") as fh:
            for qid, docs in run.items():
                for rank, doc in enumerate(trec_order(docs), start=1):
                    fh.write(f"{qid} Q0 {doc} {rank} {docs[doc]:.6f} widen-{name}\n")
        written.append(out / f"{name}.run")
    return written


def _plots(report: dict[str, Any], out: Path, board: str) -> list[Path]:
    """Recall@k of every method, and recall@100 by kind of query."""
    plt = _plt()
    fig, ax = plt.subplots(figsize=(7, 4.2))
    for m, values in report["recall_curve"].items():
        ax.plot(_CUTS, values, marker="o", label=m, linewidth=2 if m == "widen" else 1)
    ax.set_xlabel("k (postings retrieved)")
    ax.set_ylabel("mean recall@k")
    ax.set_title(f"Recall@k, {board or 'labelled queries'}")
    ax.grid(alpha=0.3)
    ax.legend(loc="lower right", fontsize=8)
    fig.tight_layout()
    fig.savefig(out / "recall_at_k.png", dpi=110)
    plt.close(fig)

    kinds = list(report["kinds"])
    shown = [m for m in _SHOWN if m in report["methods"]]
    fig, ax = plt.subplots(figsize=(7, 4))
    width = 0.8 / max(len(shown), 1)
    for i, m in enumerate(shown):
        ax.bar(
            [k + i * width for k in range(len(kinds))],
            [report["kinds"][kind]["methods"][m]["recall@100"] for kind in kinds],
            width,
            label=m,
        )
    ax.set_xticks([k + width * (len(shown) - 1) / 2 for k in range(len(kinds))], kinds)
    ax.set_ylabel("mean recall@100")
    ax.set_title("Recall@100 by kind of query")
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(out / "recall_by_kind.png", dpi=110)
    plt.close(fig)
    return [out / "recall_at_k.png", out / "recall_by_kind.png"]


def _parts_tables(report: dict[str, Any]) -> list[str]:
    """By part (tune, report) and frequency band of the query's title, where the queries say; and the
    expansions against the truth, the same way."""
    if not report.get("parts"):
        return []
    shown = [m for m in ("bag_of_words", "rm3", "widen", "widen_concepts", "curated") if m in report["methods"]]
    lines = [
        "## By part and frequency band of the query's title",
        "",
        "Thresholds were chosen on the `tune` part; `report` is where they are reported.",
        "",
        "| part, band (queries) | " + " | ".join(f"{m} recall@100 / nDCG@10 / exact-first" for m in shown) + " |",
        "|---" * (len(shown) + 1) + "|",
    ]
    for part, entry in report["parts"].items():
        for band, block in [("all", entry), *entry["bands"].items()]:
            cells = []
            for m in shown:
                v = block["methods"][m]
                cells.append(f"{v['recall@100']:.3f} / {v['ndcg@10']:.3f} / {v['exact_first']:.2f}")
            lines.append(f"| {part}, {band} ({block['queries']}) | " + " | ".join(cells) + " |")
    card = report.get("title_scorecard")
    if card:
        lines += [
            "",
            "Expansions of each title query against the truth (precision: the same or a related job; same job;",
            "coverage of the occupation's other names the dump uses; precision of the `equivalent` hint):",
            "",
            "| part, band | title queries (expanded) | precision | same job | coverage | equivalent precision |",
            "|---|---|---|---|---|---|",
        ]
        for name, c in card.items():
            if name == "wrong":
                continue
            lines.append(
                f"| {name} | {c['queries']} ({c['expanded_queries']}) | {c['precision']:.3f} | {c['same_job']:.3f}"
                f" | {c['coverage']:.3f} | {c['equivalent_precision']:.3f} |"
            )
    return [*lines, ""]


def _markdown(report: dict[str, Any], model_version: str, board: str) -> list[str]:
    lines = [
        f"# Search impact of widen on {board or 'the labelled queries'} (bundle {model_version})",
        "",
        f"{report['queries']} judged queries ({report['left_out']} left out: no relevant posting among the "
        f"{report['index_postings']} indexed), tantivy BM25 with English stemming, title weighted 3x.",
        "",
        *methods_table(report),
        "",
        "## By kind of query",
        "",
        *_kinds_table(report),
        "",
        *_parts_tables(report),
        "## Per family (recall@100, nDCG@10)",
        "",
        "| family | bag of words | widen |",
        "|---|---|---|",
    ]
    for family, v in report["per_family"].items():
        b, w = v.get("bag_of_words"), v.get("widen")
        if b and w:
            lines.append(
                f"| {family} | {b['recall@100']:.3f}, {b['ndcg@10']:.3f} | {w['recall@100']:.3f}, {w['ndcg@10']:.3f} |"
            )
    lines += ["", "## The ten queries where widen lost most nDCG@10 against the bag of words", ""]
    lines += ["| query | bag of words | widen |", "|---|---|---|"]
    for w in report["worst"]:
        values = list(w["ndcg@10"].values())
        lines.append(f"| {w['query']} | {values[0]:.3f} | {values[-1]:.3f} |")
    lines += ["", "![recall@k](recall_at_k.png)", "", "![recall@100 by kind](recall_by_kind.png)", ""]
    return lines


def write_windows(curve: dict[int, dict[str, Any]], out: Path, board: str = "") -> list[Path]:
    """The index window as a curve: widen's recall@100 and nDCG@10 over the bag of words', by window."""
    plt = _plt()
    out.mkdir(parents=True, exist_ok=True)
    days = sorted(curve)
    fig, ax = plt.subplots(figsize=(7, 4))
    for metric in ("recall@100", "ndcg@10"):
        for against, style in (("bag_of_words", "-"), ("all_required", ":")):
            ratios = [
                curve[d]["methods"]["widen"][metric] / max(curve[d]["methods"][against][metric], 1e-9) for d in days
            ]
            ax.plot(days, ratios, style, marker="o", label=f"{metric}, widen / {against}")
    ax.axhline(1.0, color="#888", linewidth=0.8)
    ax.set_xlabel("days of postings in the index (the open postings)")
    ax.set_ylabel("ratio")
    ax.set_title(f"widen against the plain baselines by index window, {board}")
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(out / "window_curve.png", dpi=110)
    plt.close(fig)
    rows = {
        d: {
            "postings": curve[d]["index_postings"],
            "queries": curve[d]["queries"],
            **{
                m: curve[d]["methods"][m] for m in ("all_required", "bag_of_words", "widen") if m in curve[d]["methods"]
            },
        }
        for d in days
    }
    (out / "windows.json").write_text(json.dumps(rows, indent=2) + "\n", encoding="utf-8")
    return [out / "window_curve.png", out / "windows.json"]
