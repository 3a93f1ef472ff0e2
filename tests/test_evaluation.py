"""Search impact: our metrics against trec_eval itself (pytrec-eval-terrier), on the same run files."""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pytest
import pytrec_eval

from widen.cli import main
from widen.decisions import DecisionSet
from widen.evaluation.index import SearchIndex
from widen.evaluation.metrics import ndcg_at, recall_at, reciprocal_rank
from widen.evaluation.report import write_report
from widen.evaluation.runs import evaluate, read_queries
from widen.lexicon import Lexicon
from widen.options import ExpansionOptions
from widen.store import Store


def _read_run(path: Path) -> dict[str, dict[str, float]]:
    run: dict[str, dict[str, float]] = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        qid, _, doc, _, score, _ = line.split()
        run.setdefault(qid, {})[doc] = float(score)
    return run


def _read_qrels(path: Path) -> dict[str, dict[str, int]]:
    qrels: dict[str, dict[str, int]] = {}
    for line in path.read_text(encoding="utf-8").splitlines():
        qid, _, doc, grade = line.split()
        qrels.setdefault(qid, {})[doc] = int(grade)
    return qrels


@pytest.fixture(scope="module")
def evaluated(
    trained_store: Path, demo_dir: Path, tmp_path_factory: pytest.TempPathFactory
) -> tuple[dict[str, Any], Path]:
    queries = read_queries(demo_dir / "queries.jsonl")[::3]  # a third of them keeps the test quick
    index = SearchIndex(demo_dir / "open_postings.jsonl", tmp_path_factory.mktemp("index"))
    lexicon = Lexicon(Store(trained_store).open_bundle())
    report = evaluate(lexicon, DecisionSet(), index, queries, ExpansionOptions())
    out = tmp_path_factory.mktemp("eval")
    write_report(report, out, lexicon.version)
    return report, out


def test_metrics_equal_trec_eval_on_the_same_run_files(evaluated: tuple[dict[str, Any], Path]) -> None:
    report, out = evaluated
    qrels = _read_qrels(out / "qrels.txt")
    # Reference implementation: trec_eval, through pytrec-eval-terrier. Its names: recall_k,
    # ndcg_cut_10 (gain = grade, log2 discount), recip_rank; relevance is grade >= 1.
    evaluator = pytrec_eval.RelevanceEvaluator(qrels, {"recall.10,100", "ndcg_cut.10", "recip_rank"})
    rows = {r["id"]: r for r in report["_rows"]}
    checked = 0
    for name in ("baseline", "expanded"):
        reference = evaluator.evaluate(_read_run(out / f"{name}.run"))
        for qid, ref in reference.items():
            ours = rows[qid][name]
            assert math.isclose(ours["recall@10"], ref["recall_10"], abs_tol=1e-4), qid
            assert math.isclose(ours["recall@100"], ref["recall_100"], abs_tol=1e-4), qid
            assert math.isclose(ours["ndcg@10"], ref["ndcg_cut_10"], abs_tol=1e-4), qid
            assert math.isclose(ours["mrr"], ref["recip_rank"], abs_tol=1e-4), qid
            checked += 1
        # A query with nothing retrieved scores 0 and still counts in the mean (trec_eval -c).
        for qid in set(qrels) - set(reference):
            assert rows[qid][name]["ndcg@10"] == 0.0 and rows[qid][name]["mrr"] == 0.0
        mean_ndcg = sum(v["ndcg_cut_10"] for v in reference.values()) / len(qrels)
        assert math.isclose(report[name]["ndcg@10"], mean_ndcg, abs_tol=1e-4)
    assert checked >= 60


def test_metric_functions_on_a_worked_example() -> None:
    # Hand-worked: relevant a (grade 2) and c (grade 1); ranking b, a, c.
    relevant = {"a": 2, "c": 1}
    ranked = ["b", "a", "c"]
    assert recall_at(ranked, relevant, 2) == 0.5
    assert reciprocal_rank(ranked, relevant) == 0.5
    dcg = 2 / math.log2(3) + 1 / math.log2(4)
    ideal = 2 / math.log2(2) + 1 / math.log2(3)
    assert math.isclose(ndcg_at(ranked, relevant, 10), dcg / ideal)


def test_report_files_and_exact_first(evaluated: tuple[dict[str, Any], Path]) -> None:
    _, out = evaluated
    for name in (
        "report.json",
        "report.md",
        "qrels.txt",
        "baseline.run",
        "expanded.run",
        "recall_at_k.png",
        "recall_gain_per_family.png",
    ):
        assert (out / name).stat().st_size > 0
    assert (out / "recall_at_k.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    saved = json.loads((out / "report.json").read_text())
    assert set(saved["baseline"]) == {"recall@10", "recall@100", "ndcg@10", "mrr", "exact_first"}
    assert len(saved["worst"]) == 10 and saved["per_family"]
    assert 0.0 <= saved["expanded"]["exact_first"] <= 1.0 and saved["baseline"]["exact_first"] == 1.0
    # Expansion finds at least as many relevant postings in the top 100 as the seeker's words alone.
    assert saved["expanded"]["recall@100"] >= saved["baseline"]["recall@100"]


def test_cli_evaluate_reuses_the_index(trained_store: Path, demo_dir: Path, tmp_path: Path) -> None:
    store = tmp_path / "store"
    import shutil

    shutil.copytree(trained_store, store)
    queries = tmp_path / "q.jsonl"
    queries.write_text("".join(read_queries_lines(demo_dir / "queries.jsonl", 6)), encoding="utf-8")
    args = [
        "evaluate",
        "--store",
        str(store),
        "--postings",
        str(demo_dir / "open_postings.jsonl"),
        "--queries",
        str(queries),
    ]
    assert main([*args, "--out", str(tmp_path / "a")]) == 0
    built = list((store / "search-index").iterdir())
    assert main([*args, "--out", str(tmp_path / "b")]) == 0
    assert list((store / "search-index").iterdir()) == built
    assert main([*args, "--out", str(tmp_path / "c"), "--k", "0"]) == 2


def read_queries_lines(path: Path, n: int) -> list[str]:
    return path.read_text(encoding="utf-8").splitlines(keepends=True)[:n]


def test_boosted_baseline_keeps_exact_matches_first(evaluated: tuple[dict[str, Any], Path]) -> None:
    report, _ = evaluated
    assert report["baseline_boost"] == 10.0
    # The targets of the search-impact issue, on the small demo's open postings: exact first,
    # nDCG not below the baseline, recall@100 at least 1.5 times the baseline.
    assert report["expanded"]["exact_first"] >= 0.95
    assert report["expanded"]["ndcg@10"] >= report["baseline"]["ndcg@10"]
    assert report["expanded"]["recall@100"] >= 1.5 * report["baseline"]["recall@100"], (
        report["baseline"]["recall@100"],
        report["expanded"]["recall@100"],
    )


def test_merged_text_is_the_baseline_boosted_or_the_query_text() -> None:
    from widen.query_text import merged_text

    assert (
        merged_text('"rn"^1', '("rn"^1 OR "staff nurse"^0.4)', 10) == '("rn"^1)^10 OR (("rn"^1 OR "staff nurse"^0.4))'
    )
    assert merged_text('"rn"^1', '"rn"^1', 0) == '"rn"^1'
